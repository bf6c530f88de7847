"""The DC current of a load given in watts: straight from the DC system, or through an inverter.

Load lists are kept in watts; the field of a run needs amperes. A DC load of power P on a
circuit of voltage V draws I = P / V. An AC load fed through an inverter draws its power over the
inverter's efficiency from the DC side, and the inverter draws its own idle power whenever it is
on: I = P / (V eta) + P_idle / V.
"""

from __future__ import annotations

import math

import numpy as np

from ..constants import PVWATTS_COEFFICIENTS, PVWATTS_ETA_NOM


def dc_current_a(power_w, voltage_v, efficiency=1.0, idle_w=0.0, on=None):
    """DC current of a load given in watts [A].

    Parameters
    ----------
    power_w : array_like [W]
        The load's power: at the DC terminals for a DC load, the AC output for a load through
        an inverter. Negative for a DC circuit that feeds the system (charging).
    voltage_v : float [V]
        The circuit's DC voltage (the inverter's DC input), more than zero.
    efficiency : float
        The inverter's efficiency, 0 < eta <= 1 (1 for a DC load).
    idle_w : float [W]
        The inverter's own draw when it is on, whatever its load (0 for a DC load).
    on : array_like of bool, optional
        Where the inverter is on (its idle draw counts); default: everywhere.

    Returns
    -------
    current_a : ndarray [A]
        I = P / (V eta) + P_idle / V where on, else P / (V eta).

    Notes
    -----
    Conservation of power on the DC side: the inverter takes P / eta to deliver P, plus its
    idle draw. 1 500 W at eta 0.88 is 142 A at 12 V, 71 A at 24 V, 36 A at 48 V.
    """
    power = np.asarray(power_w, dtype=float)
    idle = np.where(np.ones(power.shape, dtype=bool) if on is None else np.asarray(on, bool),
                    idle_w, 0.0)
    return power / (voltage_v * efficiency) + idle / voltage_v


def pvwatts_idle_share(eta_nom=PVWATTS_ETA_NOM) -> float:
    """DC power the PVWatts curve draws at zero AC output, as a share of the AC rating.

    The PVWatts model's efficiency is eta = eta_nom / eta_ref (a zeta + b / zeta + c), zeta the
    share of the DC rating, with (a, b, c) = (-0.0162, -0.0059, 0.9858) and eta_ref = 0.9637.
    The AC output eta * P_dc is zero where a zeta^2 + c zeta + b = 0; the smaller root zeta_0 is
    the share of the DC rating P_dc0 = P_ac0 / eta_nom drawn with nothing delivered, so the idle
    draw is zeta_0 / eta_nom of the AC rating (0.62 % with the default eta_nom 0.96).

    References
    ----------
    A. P. Dobos, "PVWatts Version 5 Manual", NREL (2014),
    http://pvwatts.nrel.gov/downloads/pvwattsv5.pdf; documented in pvlib's
    ``inverter.pvwatts``.
    """
    a, b, c = PVWATTS_COEFFICIENTS
    zeta0 = (-c + math.sqrt(c * c - 4 * a * b)) / (2 * a)
    return zeta0 / eta_nom
