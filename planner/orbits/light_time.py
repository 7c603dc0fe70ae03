"""Light-travel-time effect of a third body on the times of an eclipsing pair (Irwin 1952).

The pair's centre of mass moves on a Keplerian orbit about the barycentre of the triple system;
its eclipses arrive early or late by the light travel time across that orbit. Irwin (1952, ApJ
116, 211) writes the delay as

    tau(t) = A [ (1 - e3^2) / (1 + e3 cos nu3) sin(nu3 + omega3) + e3 sin omega3 ],
    A = a12 sin i3 / c,

with nu3 the true anomaly of the pair's orbit at time t (period P3, periastron T3) and omega3
the argument of periastron of the *pair's* orbit about the triple barycentre (z away from the
observer, so tau > 0 is a delay). The constant A e3 sin omega3 is Irwin's choice of zero point: a
published light-time solution gives its linear ephemeris T0 + P E in that frame, and the observed
times are T0 + P E + tau. Times in days, angles in radians.
"""

from __future__ import annotations

import astropy.constants as const
import astropy.units as u
import numpy as np

from . import kepler

#: Light travel time across one astronomical unit, days (IAU 2012 au, exact c).
AU_LIGHT_TIME_D = float((const.au / const.c).to_value(u.day))


def irwin_delay_d(t, p3_d, t3, e3, omega3_rad, amplitude_d):
    """Light-time delay tau (days) at times ``t`` (days, the scale of ``t3``); arguments broadcast.

    ``amplitude_d`` is A = a12 sin i3 / c in days (use :data:`AU_LIGHT_TIME_D` times a12 sin i3 in
    au). NaN ``amplitude_d`` gives 0 (no third body).
    """
    amplitude_d = np.asarray(amplitude_d, float)
    has = np.isfinite(amplitude_d)
    p3 = np.where(has, p3_d, 1.0)
    e3 = np.where(has, e3, 0.0)
    m = kepler.mean_motion_rad_per_day(p3) * (np.asarray(t, float) - np.where(has, t3, 0.0))
    nu = kepler.true_from_mean(m, e3)
    w = np.where(has, omega3_rad, 0.0)
    shape = (1.0 - e3**2) / (1.0 + e3 * np.cos(nu)) * np.sin(nu + w) + e3 * np.sin(w)
    return np.where(has, np.where(has, amplitude_d, 0.0) * shape, 0.0)
