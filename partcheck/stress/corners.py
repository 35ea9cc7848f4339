"""The worst-case corners of a design and the operating-point arrays that describe them.

Corners (ids as they appear in the JSON output), all at ``environment.ambient_max``:

* ``vin_min-full``, ``vin_nom-full``, ``vin_max-full``: full load at each input voltage.
  Low line decides the peak and RMS currents in CCM and boundary mode; high line the voltages
  and, in fixed-frequency DCM, nothing else (reference note sec. 8).
* ``vin_surge``: the surge voltage at full load, reported for voltages only (``load: "surge"``).
* ``vin_max-ilim`` and ``vin_min-ilim`` (when ``converter.current_limit`` is given): the load
  raised until the switch peak reaches the limit plus its propagation-delay overshoot
  (``load: "current_limit"``).  High line gives the largest power ceiling in CCM and the
  largest drain voltage and clamp power; low line the largest duty and primary RMS at the limit
  (note sec. 5).

:func:`operating_points` accepts multipliers (scalars or arrays) for the toleranced quantities so
that worst-case extremes and Monte Carlo samples reuse the same construction.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..design import Design
from .flyback import OperatingPoints

FULL, SURGE, LIMIT = "full", "surge", "current_limit"


@dataclass(frozen=True)
class CornerSpec:
    """One corner: its id, input voltage [V], load kind and ambient temperature [°C]."""

    id: str
    vin: float
    load: str
    t_amb: float


def build_corners(design: Design) -> list[CornerSpec]:
    """The corners the engine evaluates for ``design`` (see the module docstring)."""
    inp, t_amb = design.input, design.environment.ambient_max
    corners = [CornerSpec("vin_min-full", inp.vin_min, FULL, t_amb),
               CornerSpec("vin_nom-full", inp.vin_nom, FULL, t_amb),
               CornerSpec("vin_max-full", inp.vin_max, FULL, t_amb)]
    if inp.vin_surge is not None:
        corners.append(CornerSpec("vin_surge", inp.vin_surge, SURGE, t_amb))
    if design.converter.current_limit is not None:
        corners.append(CornerSpec("vin_max-ilim", inp.vin_max, LIMIT, t_amb))
        corners.append(CornerSpec("vin_min-ilim", inp.vin_min, LIMIT, t_amb))
    return corners


def operating_points(design: Design, corners: list[CornerSpec], *, vin=None, lm_scale=1.0, llk_scale=1.0,
                     fsw_scale=1.0, vf_scale=1.0, eta_scale=1.0, vclamp_scale=1.0) -> OperatingPoints:
    """Operating-point arrays for ``corners`` (one element each).

    ``vin`` overrides the corners' input voltages (an array of the same length, for sweeps); the
    ``*_scale`` multipliers (scalars or arrays of that length) apply tolerances.  Efficiency is
    capped at 1.  ``vclamp_scale`` scales the fixed (or expected) ``clamp.vclamp`` only; an RCD
    clamp given by its resistor takes its voltage from the resistor at each corner.  The clamp's
    stated defaults (Zener/TVS tolerance and temperature, forward recovery, loop inductance, node
    capacitance) come from :func:`partcheck.stress.clamp.resolve`.
    """
    from .clamp import resolve

    conv, tr, outs = design.converter, design.transformer, design.outputs
    cm = resolve(design)
    vin = np.array([c.vin for c in corners], dtype=float) if vin is None else np.asarray(vin, dtype=float)
    per = lambda attr, default=np.nan: np.array(
        [getattr(o, attr) if getattr(o, attr) is not None else default for o in outs], dtype=float)
    return OperatingPoints.create(
        vin=vin,
        vout=per("vout"), iout=per("iout"), vf=per("vf") * np.asarray(vf_scale)[..., None] if np.ndim(vf_scale)
        else per("vf") * vf_scale, n=per("turns_ratio"), rsec=per("dcr", 0.0), cout=per("cout"), esr=per("esr"),
        lm=tr.lm * np.asarray(lm_scale), llk=tr.llk * np.asarray(llk_scale),
        fsw=(conv.fsw if conv.fsw is not None else np.inf) * np.asarray(fsw_scale),
        eta=np.minimum(conv.efficiency * np.asarray(eta_scale), 1.0),
        vclamp=(design.clamp.vclamp if design.clamp is not None else np.inf) * np.asarray(vclamp_scale),
        boundary=conv.switching == "boundary",
        cd=design.switch_node_capacitance or 0.0, valley=conv.valley,
        ilim=conv.current_limit if conv.current_limit is not None else np.nan,
        t_pd=conv.current_limit_delay,
        at_limit=np.array([c.load == LIMIT for c in corners]) if len(corners) == vin.size else False,
        rclamp=cm.resistor if cm is not None else np.inf,
        cclamp=cm.capacitor if cm is not None else np.nan,
        clamp_factor=cm.level_factor if cm is not None else 1.0,
        v_fr=cm.v_forward_recovery if cm is not None else 0.0,
        l_loop=cm.loop_inductance if cm is not None else 0.0,
        c_node=cm.node_capacitance if cm is not None else 100e-12,
    )
