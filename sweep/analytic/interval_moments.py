"""Interval ``[0, L]``, time-independent results: splitting probability, mean exit
time (with drift), second moment and conditional mean exit times.

Formulas, sources and their status: ``docs/analytic-reference.md``, sections C1-C3.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

from sweep.analytic.interval_series import _interval_setup
from sweep.analytic.series import _expm1_neg_plus

# |mu L / D| below which the drifted mean exit times return their mu -> 0 limit
_DRIFT_LIMIT = 1e-8


def interval_splitting(
    x0: float, length: float, diffusivity: float, drift: float = 0.0
) -> float:
    """Splitting probability ``P(exit at L)`` of the AA interval ``[0, L]``.

    Parameters
    ----------
    x0 : float
        Start position in ``[0, L]`` [length].
    length : float
        ``L`` [length].
    diffusivity : float
        ``D`` [length**2/time].
    drift : float, optional
        ``mu`` [length/time], ``mu > 0`` toward ``L``.

    Returns
    -------
    float
        ``pi_L = x0/L`` without drift (C1 [C12]);
        ``(1 - exp(-mu x0/D)) / (1 - exp(-mu L/D))`` with drift (C2 [C24]), evaluated with
        ``expm1`` in a form that cannot overflow.

    Notes
    -----
    Sources: Redner (2001), Ch. 2, splitting probabilities and biased diffusion [memory];
    S. Karlin & H. M. Taylor, *A Second Course in Stochastic Processes* (1981), Ch. 15,
    scale function [memory]; Cox & Miller (1965), Ch. 5 [memory].
    """
    x0, L, d, mu, _ = _interval_setup(
        x0, length, diffusivity, drift, ("absorbing", "absorbing")
    )
    b = mu / d
    if b == 0.0:
        return x0 / L
    if b > 0.0:
        return math.expm1(-b * x0) / math.expm1(-b * L)
    return math.exp(b * (L - x0)) * math.expm1(b * x0) / math.expm1(b * L)


def interval_mean_exit_time(
    x0: float,
    length: float,
    diffusivity: float,
    drift: float = 0.0,
    walls: Sequence[str] = ("absorbing", "absorbing"),
) -> float:
    """Mean exit (absorption) time from the interval ``[0, L]``.

    Parameters
    ----------
    x0 : float
        Start position in ``[0, L]`` [length].
    length : float
        ``L`` [length].
    diffusivity : float
        ``D`` [length**2/time].
    drift : float, optional
        ``mu`` [length/time], ``mu > 0`` toward ``L``.
    walls : (str, str), optional
        ``(kind at 0, kind at L)``.

    Returns
    -------
    float
        Mean exit time [time].

        * AA: ``x0 (L - x0)/(2D)`` (C1 [C8]); with drift ``(L pi_L - x0)/mu`` (C2 [C25]).
        * AR: ``x0 (2L - x0)/(2D)`` (C3 [C30]); with drift
          ``-x0/mu + (D/mu**2) e^{mu L/D} (1 - e^{-mu x0/D})`` (C3 [C33b]).
        * RA: AR mirrored, ``x0 -> L - x0``, ``mu -> -mu``.
        * RR: ``inf``.

        When ``|mu L / D| < 1e-8`` the ``mu -> 0`` limit is returned.  Otherwise the drifted
        formulas are evaluated in cancellation-free rearrangements (e.g. AA:
        ``[L q(b x0) - x0 q(b L)] / (mu expm1(-b L))`` with ``q(y) = e^{-y} - 1 + y``,
        ``b = mu/D``).

    Notes
    -----
    Sources: Redner (2001), Ch. 2, unconditional exit times, biased diffusion, reflecting /
    absorbing interval [memory]; Karlin & Taylor (1981), Ch. 15, scale function and speed
    measure [memory]; Cox & Miller (1965), Ch. 5 [memory]; Carslaw & Jaeger (1959),
    Ch. III [memory].
    """
    x0, L, d, mu, w = _interval_setup(x0, length, diffusivity, drift, walls)
    if w == ("reflecting", "reflecting"):
        return math.inf
    b = mu / d
    small_drift = abs(b * L) < _DRIFT_LIMIT
    if w == ("absorbing", "absorbing"):
        if small_drift:
            return x0 * (L - x0) / (2.0 * d)
        if abs(b * L) <= 1.0:
            num = L * _expm1_neg_plus(b * x0) - x0 * _expm1_neg_plus(b * L)
            return num / (mu * math.expm1(-b * L))
        return (L * interval_splitting(x0, L, d, mu) - x0) / mu
    # AR, or RA mirrored onto AR
    if w[0] == "reflecting":
        x0, b, mu = L - x0, -b, -mu
    if small_drift:
        return x0 * (2.0 * L - x0) / (2.0 * d)
    if b * L >= -1.0:
        bl = b * L
        if bl > 700.0:
            log_val = bl + math.log(-math.expm1(-b * x0)) - math.log(d * b * b)
            return math.exp(log_val) if log_val < 709.0 else math.inf
        num = math.expm1(bl) * -math.expm1(-b * x0) - _expm1_neg_plus(b * x0)
        return num / (d * b * b)
    # strong drift toward the absorbing end: direct form, both exponentials <= 1
    return -x0 / mu - (d / mu**2) * math.exp(b * (L - x0)) * -math.expm1(b * x0)


def interval_second_moment(
    x0: float,
    length: float,
    diffusivity: float,
    walls: Sequence[str] = ("absorbing", "absorbing"),
) -> float:
    """Second moment ``E[T**2]`` of the exit time from ``[0, L]`` without drift.

    Parameters
    ----------
    x0 : float
        Start position in ``[0, L]`` [length].
    length : float
        ``L`` [length].
    diffusivity : float
        ``D`` [length**2/time].
    walls : (str, str), optional
        ``(kind at 0, kind at L)``.

    Returns
    -------
    float
        ``E[T**2]`` [time**2]: AA ``x0 (L - x0)(L**2 + L x0 - x0**2)/(12 D**2)`` (C1 [C10]);
        AR ``(8 L**3 x0 - 4 L x0**3 + x0**4)/(12 D**2)`` (C3 [C31]); RA mirrored; RR ``inf``.

    Notes
    -----
    Sources: Redner (2001), Ch. 2 [memory for section and equation numbers]; Borodin &
    Salminen (2002), Part II, Ch. 1, exit time from an interval [memory].
    """
    x0, L, d, _, w = _interval_setup(x0, length, diffusivity, 0.0, walls)
    if w == ("reflecting", "reflecting"):
        return math.inf
    if w == ("absorbing", "absorbing"):
        return x0 * (L - x0) * (L**2 + L * x0 - x0**2) / (12.0 * d**2)
    if w[0] == "reflecting":
        x0 = L - x0
    return (8.0 * L**3 * x0 - 4.0 * L * x0**3 + x0**4) / (12.0 * d**2)


def interval_conditional_mean_exit_time(
    x0: float, length: float, diffusivity: float
) -> tuple[float, float]:
    """Conditional mean exit times of the AA interval ``[0, L]`` without drift.

    Parameters
    ----------
    x0 : float
        Start position in ``(0, L)`` [length].
    length : float
        ``L`` [length].
    diffusivity : float
        ``D`` [length**2/time].

    Returns
    -------
    (E[T | exit at 0], E[T | exit at L]) : tuple of float
        ``x0 (2L - x0)/(6D)`` (C1 [C15]) and ``(L**2 - x0**2)/(6D)`` (C1 [C14]) [time].

    Notes
    -----
    Sources: Redner (2001), Ch. 2, conditional exit times [memory for section and equation
    numbers].
    """
    x0, L, d, _, _ = _interval_setup(
        x0, length, diffusivity, 0.0, ("absorbing", "absorbing")
    )
    return x0 * (2.0 * L - x0) / (6.0 * d), (L**2 - x0**2) / (6.0 * d)
