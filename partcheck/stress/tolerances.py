"""Tolerances: worst case by the extremes of the tolerance box, and vectorised Monte Carlo.

Both take a :class:`~partcheck.design.Design` and a tolerance table (``{key: fraction}``, the
design's ``[tolerances]`` by default, ±fraction around the nominal value) and evaluate the
engine's role stresses over every corner of the design (:mod:`partcheck.stress.corners`).  All
points — corners × tolerance settings — go through **one** call of
:func:`partcheck.stress.flyback.solve` on arrays.

Keys: ``lm``, ``llk``, ``fsw``, ``vf``, ``efficiency``, ``vclamp``, ``current_limit``, ``vout``
(as in the design file) and ``cout``, ``esr`` (bank tolerances, e.g. from the catalog).

* :func:`worst_case` evaluates the 2^k extremes of the box (every combination of −tol/+tol of the
  k toleranced quantities).  For a stress that is monotone in each quantity, the largest value
  over the extremes is the worst case over the whole box; a stress that is not (one that crosses
  a CCM/DCM boundary inside the box) can peak inside it, which the Monte Carlo run then shows.
* :func:`monte_carlo` draws ``samples`` settings (uniform in the box by default, or normal with
  the tolerance as 3σ, truncated at the tolerance), reproducibly from ``seed``, and reports per
  stress the worst sample and the 99.7th percentile of each sample's worst-corner value.

A setting with no valid operating point (duty at the controller maximum, D + D2 > 1, a clamp
at or below the reflected voltage...) is not a crash: it is counted and reported, and left out
of the statistics.  The nominal design itself must be valid (:func:`validity.check` raises).

References
----------
Worst-case analysis by extreme values and Monte Carlo tolerance analysis: ``common practice``
(e.g. the tolerance-analysis chapters of reliability-engineering texts, from memory).
"""

from __future__ import annotations

import itertools
from collections.abc import Mapping

import numpy as np

from ..design import Design, load_design
from . import corners as _corners
from . import validity
from .flyback import DCM, STRESS_KINDS, VOLTAGE_KEYS, OperatingPoints, output_role, solve

#: Toleranced quantities this module understands, with the OperatingPoints field each scales.
TOLERANCE_FIELDS = {
    "lm": "lm",
    "llk": "llk",
    "fsw": "fsw",
    "vf": "vf",
    "efficiency": "eta",
    "vclamp": "vclamp",
    "current_limit": "ilim",
    "vout": "vout",
    "cout": "cout",
    "esr": "esr",
}
_TOL = 1e-9


def _design(design) -> Design:
    return design if isinstance(design, Design) else load_design(design)


def _tolerances(design: Design, tolerances: Mapping[str, float] | None) -> dict[str, float]:
    tol = dict(design.tolerances if tolerances is None else tolerances)
    unknown = sorted(set(tol) - set(TOLERANCE_FIELDS))
    if unknown:
        raise ValueError(
            f"unknown tolerance key(s) {', '.join(unknown)}; expected {', '.join(TOLERANCE_FIELDS)}"
        )
    for k, v in tol.items():
        if not 0.0 <= v < 1.0:
            raise ValueError(f"tolerance {k} = {v!r} is outside [0, 1)")
    return {k: float(v) for k, v in tol.items() if v > 0}


def _operating_points(design: Design, specs, scales: dict[str, np.ndarray]) -> OperatingPoints:
    """Operating points for ``specs`` (one per point) with per-point multipliers ``scales``."""
    one = np.ones(len(specs))
    op = _corners.operating_points(design, specs)
    eta_nominal = design.converter.efficiency
    for key, field_name in TOLERANCE_FIELDS.items():
        s = scales.get(key, one)
        arr = getattr(op, field_name)
        if field_name == "eta":
            setattr(op, field_name, np.minimum(eta_nominal * s, 1.0))
        elif arr.ndim == 2:
            setattr(op, field_name, arr * s[:, None])
        else:
            setattr(op, field_name, arr * s)
    return op


def _feasible(design: Design, specs, op: OperatingPoints, sol: dict[str, np.ndarray]) -> np.ndarray:
    """Mask of points with a valid operating point (the conditions :func:`validity.check` raises on)."""
    limit = np.array([c.load == _corners.LIMIT for c in specs])
    ok = np.isfinite(sol["ipk"]) & np.isfinite(sol["duty"])
    ok &= sol["psec"] <= sol["pin"] * (1 + _TOL)
    ok &= sol["duty"] < design.converter.max_duty * (1 - _TOL)
    ok &= ~((sol["mode"] == DCM) & (sol["duty"] + sol["d2"] > 1 + 1e-6))
    if design.clamp is not None:
        ok &= (op.vclamp > sol["vr"]) & sol["secondary_fit"]
    if design.converter.current_limit is not None:
        ok &= limit | (sol["ipk"] <= op.ilim * (1 + _TOL))
    return ok


def role_arrays(design: Design, op: OperatingPoints, sol: dict[str, np.ndarray]) -> dict[str, np.ndarray]:
    """``{"<role>.<stress>": array over points}``: the engine's role stresses, vectorised.

    Same mapping as :func:`partcheck.stress.flyback.role_stresses` (a test checks it point by
    point), except that the transformer's peak flux uses each point's own (toleranced) Lm.
    """
    out: dict[str, np.ndarray] = {}

    def put(role: str, key: str, value) -> None:
        out[f"{role}.{key}"] = np.asarray(value, dtype=float) * np.ones(len(op))

    put("switch", "v_peak", sol["sw_vpk"])
    put("switch", "i_peak", sol["ipk"])
    put("switch", "i_rms", sol["sw_rms"])
    put("switch", "i_avg", sol["sw_avg"])
    put("switch", "v_plateau", sol["sw_v_plateau"])
    put("switch", "v_clamp_level", sol["sw_vpk_steady"])
    put("switch", "v_overshoot_fr", sol["sw_vpk_fr"])
    put("switch", "v_overshoot_loop", sol["sw_vpk_loop"])
    put("switch", "v_reflected", sol["vr"])
    for j, _o in enumerate(design.outputs):
        r = output_role("rectifier", design, j)
        put(r, "v_reverse", sol["vrect_j"][:, j])
        put(r, "i_peak", sol["is_pk_j"][:, j])
        put(r, "i_rms", sol["is_rms_j"][:, j])
        put(r, "i_avg", sol["is_avg_j"][:, j])
    if design.clamp is not None:
        lk = design.transformer.llk > 0
        for role in ("clamp", "clamp_diode"):
            if role == "clamp":
                put(role, "v", sol["clamp_v"])
                put(role, "p_loss", sol["p_clamp"])
                put(role, "v_mean", sol["clamp_vc"])
                if design.clamp.kind == "rcd" and design.clamp.capacitor is not None:
                    put(role, "v_ripple_pp", sol["clamp_ripple"])
            else:
                put(role, "v_reverse", sol["clamp_diode_vr"])
                put(role, "i_off", sol["clamp_diode_i_off"])
            put(role, "i_peak", sol["ipk"] if lk else 0.0)
            put(role, "i_avg", sol["clamp_avg"])
            put(role, "i_rms", sol["clamp_rms"])
    put("input_cap", "v_dc", op.vin)
    put("input_cap", "i_rms", sol["icin"])
    for j, _o in enumerate(design.outputs):
        r = output_role("output_cap", design, j)
        put(r, "v_dc", sol["vout_j"][:, j])
        put(r, "i_rms", sol["icout_j"][:, j])
        put(r, "v_ripple_pp", sol["vripple_j"][:, j])
    put("transformer", "i_peak", sol["ipk"])
    put("transformer", "i_rms_pri", sol["pri_rms"])
    put("transformer", "i_rms_sec", sol["is_rms_j"][:, 0])
    if len(design.outputs) > 1:
        for j, o in enumerate(design.outputs):
            put("transformer", f"i_rms_sec:{o.name}", sol["is_rms_j"][:, j])
    t = design.transformer
    if t.turns_primary and t.ae:
        put("transformer", "b_peak", op.lm * sol["ipk"] / (t.turns_primary * t.ae))
    return out


def _evaluate(design: Design, specs, scales):
    """Solve all points at once; stress arrays with NaN where a point is infeasible or not reported."""
    op = _operating_points(design, specs, scales)
    sol = solve(op)
    sol["vin_dc"] = op.vin
    ok = _feasible(design, specs, op, sol)
    surge = np.array([c.load == _corners.SURGE for c in specs])
    stresses = role_arrays(design, op, sol)
    for key, arr in stresses.items():
        bad = ~ok | ~np.isfinite(arr)
        if key.split(".", 1)[1].split(":")[0] not in VOLTAGE_KEYS:
            bad |= surge
        stresses[key] = np.where(bad, np.nan, arr)
    return stresses, ok


def _nominal_specs(design: Design):
    specs = _corners.build_corners(design)
    op = _corners.operating_points(design, specs)
    sol = solve(op)
    sol["vin_dc"] = op.vin
    keep, notes = validity.check(design, specs, op, sol)  # raises for an invalid nominal design
    return [s for s, k in zip(specs, keep) if k], notes


def _kind(key: str) -> str | None:
    return STRESS_KINDS.get(key.split(".", 1)[1].split(":")[0])


def worst_case(design, tolerances: Mapping[str, float] | None = None) -> dict:
    """Worst case of every role stress over the extremes of the tolerance box and all corners.

    Parameters
    ----------
    design: a :class:`~partcheck.design.Design` or a path to a design file.
    tolerances: ``{key: fraction}`` (±); the design's ``[tolerances]`` when None.

    Returns
    -------
    ``{"method": "extremes", "tolerances", "combinations", "points", "infeasible", "notes",
    "stresses": {"<role>.<stress>": {"nominal", "worst", "corner", "setting", "kind"}}}``;
    ``nominal`` is the worst corner without tolerances, ``setting`` the ± signs of the extreme
    that gives ``worst``.  SI units.

    References
    ----------
    Extreme-value worst-case analysis: ``common practice``.
    """
    design = _design(design)
    tol = _tolerances(design, tolerances)
    specs, notes = _nominal_specs(design)
    keys = sorted(tol)
    signs = np.array(list(itertools.product((-1.0, 1.0), repeat=len(keys)))) if keys else np.zeros((1, 0))
    signs = np.vstack([np.zeros((1, len(keys))), signs])  # row 0: nominal
    n_set, n_c = signs.shape[0], len(specs)
    point_specs = [s for _ in range(n_set) for s in specs]  # setting-major
    scales = {k: np.repeat(1.0 + signs[:, i] * tol[k], n_c) for i, k in enumerate(keys)}
    stresses, ok = _evaluate(design, point_specs, scales)

    infeasible = int(np.sum(~ok.reshape(n_set, n_c)[1:]))
    if infeasible:
        bad = np.nonzero(~ok.reshape(n_set, n_c)[1:])
        examples = sorted({f"{specs[c].id} at {_signs_text(keys, signs[s + 1])}" for s, c in zip(*bad)})
        ex = "; ".join(examples[:3])
        notes.append(
            f"{infeasible} of {(n_set - 1) * n_c} extreme points have no valid operating point "
            f"(e.g. {ex}): the design does not hold over its tolerances"
        )
    result: dict[str, dict] = {}
    for key, arr in stresses.items():
        grid = arr.reshape(n_set, n_c)
        nominal = _nanmax(grid[0])
        entry = {"nominal": nominal, "worst": None, "corner": None, "setting": None, "kind": _kind(key)}
        if np.any(np.isfinite(grid[1:])):
            s, c = np.unravel_index(np.nanargmax(grid[1:]), grid[1:].shape)
            entry.update(
                worst=float(grid[1 + s, c]), corner=specs[c].id, setting=_setting(keys, signs[1 + s])
            )
        result[key] = entry
    return {
        "method": "extremes",
        "tolerances": tol,
        "combinations": n_set - 1,
        "points": (n_set - 1) * n_c,
        "infeasible": infeasible,
        "notes": notes,
        "stresses": result,
    }


def _signs_text(keys, row) -> str:
    return ", ".join(f"{k} {'+' if v > 0 else '−'}tol" for k, v in zip(keys, row))


def _setting(keys, row) -> dict[str, float]:
    return {k: float(v) for k, v in zip(keys, row)}


def _nanmax(a: np.ndarray) -> float | None:
    return float(np.nanmax(a)) if np.any(np.isfinite(a)) else None


def monte_carlo(
    design,
    tolerances: Mapping[str, float] | None = None,
    samples: int = 1000,
    seed: int = 0,
    *,
    distribution: str = "uniform",
) -> dict:
    """Monte Carlo tolerance analysis of every role stress, one vectorised engine call.

    Each sample draws every toleranced quantity independently — ``"uniform"`` over ±tol (no
    distribution is known for a tolerance band; default) or ``"normal"`` with σ = tol/3,
    truncated at ±tol — and evaluates all the design's corners.  A sample's stress is its worst
    corner; per stress the result gives the worst sample and the 99.7th percentile over samples.

    Parameters
    ----------
    design: a :class:`~partcheck.design.Design` or a path.
    tolerances: ``{key: fraction}``; the design's ``[tolerances]`` when None.
    samples: number of samples (each one evaluates every corner).
    seed: seed of :func:`numpy.random.default_rng`; the same seed gives the same result.

    Returns
    -------
    ``{"method": "monte_carlo", "samples", "seed", "distribution", "tolerances", "infeasible",
    "notes", "stresses": {"<role>.<stress>": {"nominal", "worst", "p99_7", "mean", "corner",
    "sample", "setting", "kind"}}}``; ``setting`` holds the relative deviations of the worst
    sample, ``infeasible`` the number of samples with no valid operating point at some corner
    (left out).

    References
    ----------
    Monte Carlo tolerance analysis: ``common practice``.
    """
    if samples < 1:
        raise ValueError("samples must be at least 1")
    if distribution not in ("uniform", "normal"):
        raise ValueError(f"unknown distribution {distribution!r}; expected 'uniform' or 'normal'")
    design = _design(design)
    tol = _tolerances(design, tolerances)
    specs, notes = _nominal_specs(design)
    keys = sorted(tol)
    rng = np.random.default_rng(seed)
    if distribution == "uniform":
        dev = rng.uniform(-1.0, 1.0, size=(samples, len(keys)))
    else:
        dev = np.clip(rng.standard_normal(size=(samples, len(keys))) / 3.0, -1.0, 1.0)
    dev = np.vstack([np.zeros((1, len(keys))), dev])  # row 0: nominal
    n_c = len(specs)
    point_specs = [s for _ in range(samples + 1) for s in specs]
    scales = {k: np.repeat(1.0 + dev[:, i] * tol[k], n_c) for i, k in enumerate(keys)}
    stresses, ok = _evaluate(design, point_specs, scales)

    ok_sample = ok.reshape(samples + 1, n_c).all(axis=1)
    infeasible = int(np.sum(~ok_sample[1:]))
    if infeasible:
        notes.append(
            f"{infeasible} of {samples} samples have no valid operating point at some corner "
            f"({100 * infeasible / samples:.2g} %): left out of the statistics"
        )
    result: dict[str, dict] = {}
    for key, arr in stresses.items():
        grid = arr.reshape(samples + 1, n_c)
        nominal = _nanmax(grid[0])
        entry = {
            "nominal": nominal,
            "worst": None,
            "p99_7": None,
            "mean": None,
            "corner": None,
            "sample": None,
            "setting": None,
            "kind": _kind(key),
        }
        body = np.where(ok_sample[1:, None], grid[1:], np.nan)
        has = np.any(np.isfinite(body), axis=1)
        if np.any(has):
            per_sample = np.full(samples, np.nan)
            per_sample[has] = np.nanmax(body[has], axis=1)
            s = int(np.nanargmax(per_sample))
            c = int(np.nanargmax(body[s]))
            finite = per_sample[np.isfinite(per_sample)]
            entry.update(
                worst=float(per_sample[s]),
                p99_7=float(np.percentile(finite, 99.7)),
                mean=float(np.mean(finite)),
                corner=specs[c].id,
                sample=s,
                setting={k: float(dev[1 + s, i] * tol[k]) for i, k in enumerate(keys)},
            )
        result[key] = entry
    return {
        "method": "monte_carlo",
        "samples": samples,
        "seed": seed,
        "distribution": distribution,
        "tolerances": tol,
        "infeasible": infeasible,
        "notes": notes,
        "stresses": result,
    }
