"""Transformer core helpers: the peak current the core must carry and its peak flux density.

Plain functions of SI floats or numpy arrays.
"""

from __future__ import annotations

import numpy as np


def core_peak_current(i_limit, vin, l_primary, t_delay):
    """Switch (and core) peak current when the current limit trips.

    The comparator sees the limit ``i_limit`` but the switch turns off ``t_delay`` later, while
    the primary current keeps rising at ``vin / l_primary``.

    Parameters
    ----------
    i_limit: current-limit threshold referred to the switch current. [A]
    vin: DC input voltage. [V]
    l_primary: inductance the current ramps in during the on-time (Lm + Llk). [H]
    t_delay: current-sense comparator + driver propagation delay. [s]

    Returns
    -------
    Peak primary current. [A]

    References
    ----------
    Ipk_max = Ilim + Vin·t_pd/Lm: flyback reference note sec. 5 (textbook treatment, from memory).
    """
    return np.asarray(i_limit) + np.asarray(vin) * np.asarray(t_delay) / np.asarray(l_primary)


def flux_density_peak(lm, i_peak, turns_primary, ae):
    """Peak flux density in the core, Bpk = Lm·Ipk/(Np·Ae).

    Parameters
    ----------
    lm: magnetizing inductance referred to the primary. [H]
    i_peak: peak magnetizing current. [A]
    turns_primary: primary turns Np. [-]
    ae: effective core cross-section. [m²]

    Returns
    -------
    Peak flux density. [T]

    References
    ----------
    Faraday's law with Lm = Np·Φ/Im; flyback reference note sec. 4.3 (from memory).
    """
    return np.asarray(lm) * np.asarray(i_peak) / (np.asarray(turns_primary) * np.asarray(ae))
