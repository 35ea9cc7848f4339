"""Operating-point checks: an impossible corner is an error, a remarkable one a note.

:func:`check` looks at the solved corners of a design.  Errors raise
:class:`~partcheck.errors.DesignError` naming the design file, the key to change, the value
and what was expected; notes are plain strings returned beside the figures.
"""

from __future__ import annotations

import numpy as np

from ..design import Design
from ..errors import DesignError
from ..units import format_quantity
from .corners import LIMIT, CornerSpec
from .flyback import DCM, OperatingPoints

_TOL = 1e-9


def check(design: Design, corners: list[CornerSpec], op: OperatingPoints,
          sol: dict[str, np.ndarray]) -> tuple[np.ndarray, list[str]]:
    """Validate solved corners.

    Returns
    -------
    keep:
        Boolean mask of the corners to report (an overload corner the controller cannot reach
        because its maximum duty intervenes first is left out, with a note).
    notes:
        Remarks to show beside the results.

    Raises
    ------
    DesignError
        Duty at or beyond the controller maximum at a full-load corner, D + D2 > 1, an efficiency
        higher than the rectifier drops allow, a clamp at or below the reflected voltage, a leakage
        reset longer than the off-time, a current limit below the full-load peak.
    """
    file, conv = design.file, design.converter
    ids = [c.id for c in corners]
    limit = np.array([c.load == LIMIT for c in corners])
    keep = np.ones(len(corners), dtype=bool)
    notes: list[str] = []

    bad = ~np.isfinite(sol["ipk"]) | ~np.isfinite(sol["duty"])
    if np.any(bad):
        i = int(np.argmax(bad))
        raise DesignError(f"no operating point exists at corner {ids[i]} (the figures are not finite); "
                          "check the turns ratio, inductance and frequency", file=file, key="transformer.lm")

    over = sol["psec"] > sol["pin"] * (1 + _TOL)
    if np.any(over):
        i = int(np.argmax(over))
        need = sol["po"][i] / sol["psec"][i]
        raise DesignError(
            f"{conv.efficiency!r} is higher than the rectifier drops allow at {ids[i]}: the power through the "
            f"transformer {format_quantity(sol['psec'][i], 'W')} exceeds the input power "
            f"{format_quantity(sol['pin'][i], 'W')}; expected an efficiency at most Po/Psec = {need:.3f}",
            file=file, key="converter.efficiency")

    if design.clamp is not None:
        vr = sol["vr"]
        low = op.vclamp <= vr
        if np.any(low):
            i = int(np.argmax(low))
            raise DesignError(f"{format_quantity(op.vclamp[i], 'V')} is at or below the reflected voltage "
                              f"{format_quantity(vr[i], 'V')} at {ids[i]}; expected a clamp voltage above it",
                              file=file, key="clamp.vclamp")
        fit = sol["secondary_fit"]
        if not np.all(fit):
            i = int(np.argmin(fit))
            raise DesignError(
                f"{format_quantity(op.vclamp[i], 'V')} is so close to the reflected voltage "
                f"{format_quantity(vr[i], 'V')} that the leakage reset outlasts the off-time at {ids[i]} "
                "(ts = Llk·Ipk/(Vc − Vr)); expected a higher clamp voltage or a smaller llk",
                file=file, key="clamp.vclamp")

    duty_hi = sol["duty"] >= conv.max_duty * (1 - _TOL)
    for i in np.nonzero(duty_hi & limit)[0]:
        keep[i] = False
        notes.append(f"{ids[i]}: the duty would reach {sol['duty'][i]:.3f} before the current limit, at or beyond "
                     f"the controller's maximum {conv.max_duty:g}; the maximum duty limits the power there, "
                     "so this overload corner is left out")
    full_hi = duty_hi & ~limit
    if np.any(full_hi):
        i = int(np.argmax(full_hi))
        raise DesignError(
            f"the duty at {ids[i]} is {sol['duty'][i]:.3f}, at or beyond the controller's maximum {conv.max_duty:g} "
            f"(converter.max_duty{'' if 'max_duty' in design.raw.get('converter', {}) else ', the default'}); "
            "expected a lower turns ratio, a higher Lm or a higher minimum input", file=file, key="converter.max_duty")

    d_sum = sol["duty"] + sol["d2"]
    over = (sol["mode"] == DCM) & (d_sum > 1 + 1e-6)
    if np.any(over):
        i = int(np.argmax(over))
        raise DesignError(f"the DCM solution at {ids[i]} needs D + D2 = {d_sum[i]:.3f} > 1; the converter cannot "
                          "demagnetize within the period; expected a lower lm, a higher fsw or a lower load",
                          file=file, key="transformer.lm")

    if conv.current_limit is not None:
        short = ~limit & (sol["ipk"] > conv.current_limit)
        if np.any(short):
            i = int(np.argmax(sol["ipk"] * short))
            raise DesignError(
                f"{format_quantity(conv.current_limit, 'A')} is below the switch peak "
                f"{format_quantity(sol['ipk'][i], 'A')} at {ids[i]}: the converter cannot deliver full load; "
                "expected a current limit above the full-load peak", file=file, key="converter.current_limit")

    short_eta = sol["pin"] < (sol["psec"] + sol["p_clamp"]) * (1 - 1e-6)
    for i in np.nonzero(short_eta)[0]:
        notes.append(f"{ids[i]}: the efficiency {conv.efficiency:g} leaves less input power than the rectified "
                     f"output plus the computed clamp loss {format_quantity(sol['p_clamp'][i], 'W')} need; the primary "
                     "currents (from the efficiency) are then lower than the secondary ones imply")
    for i in np.nonzero(sol["fs_clamped"])[0]:
        notes.append(f"{ids[i]}: the boundary-mode frequency would exceed the maximum "
                     f"{format_quantity(conv.fsw, 'Hz')}; the converter runs clamped at it in DCM, computed that way")
    for out in design.outputs:
        if not out.vf_given:
            notes.append(f"output {out.name!r}: no vf given, the rectifier drop is taken as 0 V")
        if not out.turns_ratio_given:
            notes.append(f"output {out.name!r}: turns ratio derived from equal volts per turn, "
                         f"Np/Ns = {out.turns_ratio:.4g}")
    return keep, notes
