"""Interval ``[0, L]``, time-dependent laws: survival, exit-time densities and the
propagator, for each pair of wall kinds (absorbing or reflecting), with drift where a
closed form exists.

Formulas, sources and their status: ``docs/analytic-reference.md``, section C.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from numpy.typing import ArrayLike

from sweep.analytic.interval_series import (
    _aa,
    _interval_setup,
    _no_drift_closed_form,
    _on_absorbing_wall,
    _rr_eigen,
    _rr_image,
)
from sweep.analytic.series import (
    IMAGE_SWITCH,
    FloatArray,
    _f64,
    _fill_positive_times,
    _time,
)


def interval_survival(
    t: ArrayLike,
    x0: float,
    length: float,
    diffusivity: float,
    drift: float = 0.0,
    walls: Sequence[str] = ("absorbing", "absorbing"),
) -> FloatArray:
    """Survival probability in the interval ``[0, L]``.

    Parameters
    ----------
    t : array_like
        Time(s) ``>= 0`` [time], any shape.
    x0 : float
        Start position in ``[0, L]`` [length].
    length : float
        ``L`` [length].
    diffusivity : float
        ``D`` [length**2/time].
    drift : float, optional
        ``mu`` [length/time], ``mu > 0`` toward ``x = L``.  Supported for AA and RR only.
    walls : (str, str), optional
        ``(kind at 0, kind at L)``, each ``"absorbing"`` or ``"reflecting"``.

    Returns
    -------
    ndarray of float64
        ``S(t)``, shape of ``t``.

        * AA: ``(4/pi) sum_{n odd} sin(n pi x0/L)/n exp(-D (n pi/L)**2 t)`` (C1); with drift
          the C2 series ``(2/L) e^{-a x0 - mu**2 t/(4D)} sum_n sin(k_n x0) k_n
          (1 - (-1)**n e^{aL}) / (a**2 + k_n**2) e^{-D k_n**2 t}``, ``a = mu/(2D)``.  For
          ``D t/L**2 < 0.05`` the image sum (C1 [C2]; drifted version [derived] by the Doob
          transform) is used.
        * AR / RA (no drift): ``S_AR(t|x0; L) = S_AA(t|x0; 2L)`` (fold identity, C3).
        * RR: 1.

    Raises
    ------
    NotImplementedError
        AR or RA with nonzero drift.

    Notes
    -----
    Sources: Redner (2001), Ch. 2, "First passage in an interval" and biased diffusion
    [memory for section and equation numbers]; H. S. Carslaw & J. C. Jaeger, *Conduction of
    Heat in Solids*, 2nd ed. (1959), Ch. III [memory]; Borodin & Salminen (2002), Part II,
    Ch. 1 [memory]; D. R. Cox & H. D. Miller, *The Theory of Stochastic Processes* (1965),
    Ch. 5 [memory].
    """
    x0, L, d, mu, w = _interval_setup(x0, length, diffusivity, drift, walls)
    t_arr = _time(t)
    if w == ("reflecting", "reflecting"):
        return np.ones(t_arr.shape)
    if _on_absorbing_wall(x0, L, w):
        return np.zeros(t_arr.shape)
    if w == ("absorbing", "absorbing"):
        start, span = x0, L
    else:
        if mu != 0.0:
            raise _no_drift_closed_form("survival", w)
        start = x0 if w[0] == "absorbing" else L - x0
        span = 2.0 * L
    return _fill_positive_times(
        t_arr, 1.0, lambda tp: _aa("survival", tp, start, span, d, mu)
    )


def interval_exit_density(
    t: ArrayLike,
    x0: float,
    length: float,
    diffusivity: float,
    drift: float = 0.0,
) -> tuple[FloatArray, FloatArray]:
    """Exit-time densities through each end of the AA interval ``[0, L]``.

    Parameters
    ----------
    t : array_like
        Time(s) ``>= 0`` [time]; 0 is returned at ``t = 0``.
    x0 : float
        Start position in ``[0, L]`` [length].
    length : float
        ``L`` [length].
    diffusivity : float
        ``D`` [length**2/time].
    drift : float, optional
        ``mu`` [length/time], ``mu > 0`` toward ``x = L``.

    Returns
    -------
    (f_0, f_L) : tuple of ndarray of float64
        Densities [1/time] of exiting at 0 and at L; ``f_0 + f_L = -dS/dt``.  Series (C1,
        C2 [C22]): ``f_0 = (2D/L) e^{-a x0 - mu**2 t/(4D)} sum k_n sin(k_n x0) e^{-D k_n**2
        t}``, ``f_L = -(2D/L) e^{a(L-x0) - mu**2 t/(4D)} sum k_n (-1)**n sin(k_n x0)
        e^{-D k_n**2 t}``; for ``D t/L**2 < 0.05`` the image sums of C1 [C6, C7] (drifted
        version [derived]).

    Notes
    -----
    Sources: Redner (2001), Ch. 2 [memory for section and equation numbers]; Carslaw &
    Jaeger (1959), Ch. III [memory]; Cox & Miller (1965), Ch. 5 [memory].
    """
    x0, L, d, mu, _ = _interval_setup(
        x0, length, diffusivity, drift, ("absorbing", "absorbing")
    )
    t_arr = _time(t)
    if x0 in (0.0, L):
        return np.zeros(t_arr.shape), np.zeros(t_arr.shape)
    f0 = _fill_positive_times(t_arr, 0.0, lambda tp: _aa("f0", tp, x0, L, d, mu))
    fl = _fill_positive_times(t_arr, 0.0, lambda tp: _aa("fL", tp, x0, L, d, mu))
    return f0, fl


def interval_fpt_density(
    t: ArrayLike,
    x0: float,
    length: float,
    diffusivity: float,
    drift: float = 0.0,
    walls: Sequence[str] = ("absorbing", "absorbing"),
) -> FloatArray:
    """First-passage (exit) time density ``f = -dS/dt`` in the interval ``[0, L]``.

    Parameters
    ----------
    t : array_like
        Time(s) ``>= 0`` [time]; 0 is returned at ``t = 0``.
    x0 : float
        Start position in ``[0, L]`` [length].
    length : float
        ``L`` [length].
    diffusivity : float
        ``D`` [length**2/time].
    drift : float, optional
        ``mu`` [length/time]; supported for AA and RR only.
    walls : (str, str), optional
        ``(kind at 0, kind at L)``.

    Returns
    -------
    ndarray of float64
        ``f(t)`` [1/time], shape of ``t``.  AA: ``f_0 + f_L`` (C1, C2); AR/RA (no drift):
        ``(2D/L) sum_m kappa_m sin(kappa_m x0) exp(-D kappa_m**2 t)``, ``kappa_m =
        (m + 1/2) pi/L`` (C3), evaluated through the fold onto AA on ``[0, 2L]``; RR: 0.

    Raises
    ------
    NotImplementedError
        AR or RA with nonzero drift.

    Notes
    -----
    Sources: Redner (2001), Ch. 2 [memory for section and equation numbers]; Carslaw &
    Jaeger (1959), Ch. III [memory].
    """
    x0, L, d, mu, w = _interval_setup(x0, length, diffusivity, drift, walls)
    t_arr = _time(t)
    if w == ("reflecting", "reflecting") or _on_absorbing_wall(x0, L, w):
        return np.zeros(t_arr.shape)
    if w == ("absorbing", "absorbing"):
        start, span = x0, L
    else:
        if mu != 0.0:
            raise _no_drift_closed_form("FPT density", w)
        start = x0 if w[0] == "absorbing" else L - x0
        span = 2.0 * L

    def compute(tp: FloatArray) -> FloatArray:
        return _aa("f0", tp, start, span, d, mu) + _aa("fL", tp, start, span, d, mu)

    return _fill_positive_times(t_arr, 0.0, compute)


def interval_density(
    x: ArrayLike,
    t: ArrayLike,
    x0: float,
    length: float,
    diffusivity: float,
    walls: Sequence[str] = ("absorbing", "absorbing"),
    drift: float = 0.0,
) -> FloatArray:
    """Propagator (density of surviving walkers) in the interval ``[0, L]``.

    Parameters
    ----------
    x : array_like
        Evaluation point(s) [length]; 0 outside ``[0, L]``.  Broadcast against ``t``.
    t : array_like
        Time(s) ``>= 0`` [time]; 0 at ``t = 0``.
    x0 : float
        Start position in ``[0, L]`` [length].
    length : float
        ``L`` [length].
    diffusivity : float
        ``D`` [length**2/time].
    walls : (str, str), optional
        ``(kind at 0, kind at L)``.
    drift : float, optional
        ``mu`` [length/time]; supported for AA (C2) and RR (C5).

    Returns
    -------
    ndarray of float64
        ``p(x, t | x0)`` [1/length], broadcast shape of ``x`` and ``t``;
        ``integral_0^L p dx = S(t)``.

        * AA: ``(2/L) sum sin(k_n x0) sin(k_n x) e^{-D k_n**2 t}`` (C1), times
          ``exp(a(x - x0) - mu**2 t/(4D))`` with drift (C2); image sum for
          ``D t/L**2 < 0.05`` (C1 [C1]; drifted version [derived]).
        * AR / RA (no drift): ``p_AA,2L(x) + p_AA,2L(2L - x)`` (C3 fold identity).
        * RR (no drift): ``1/L + (2/L) sum cos(k_n x0) cos(k_n x) e^{-D k_n**2 t}``, image
          sum ``sum_k [g(x-x0-2kL) + g(x+x0-2kL)]`` for small times (C4).
        * RR with drift: ``p_inf(x) + (2/L) e^{a(x-x0)} sum psi_n(x) psi_n(x0)/(k_n**2 +
          a**2) e^{-D(k_n**2 + a**2) t}``, ``psi_n = k_n cos(k_n x) + a sin(k_n x)`` (C5).
          For ``D t/L**2 < 0.05`` an exact image series is used, obtained by Poisson
          summation of the C5 series [derived]; its m = 0 terms are the single-wall
          Harrison kernel of sheet G2.

    Raises
    ------
    NotImplementedError
        AR or RA with nonzero drift.

    Notes
    -----
    Sources: Redner (2001), Ch. 2 [memory]; Carslaw & Jaeger (1959), Ch. III [memory];
    Cox & Miller (1965), Ch. 5 [memory].  The RR cosine series (C4) has no published source
    recorded in the sheet.  C5 is [derived] in the sheet (Sturm-Liouville expansion after
    the similarity transform); H. Risken, *The Fokker-Planck Equation* (1989), treats this
    class of problems [memory].
    """
    x0, L, d, mu, w = _interval_setup(x0, length, diffusivity, drift, walls)
    x_arr = _f64(x)
    t_arr = _time(t)
    x_b, t_b = np.broadcast_arrays(x_arr, t_arr)
    out = np.zeros(x_b.shape)
    inside = (x_b >= 0.0) & (x_b <= L) & (t_b > 0.0)
    if not np.any(inside) or _on_absorbing_wall(x0, L, w):
        return out
    xi, ti = x_b[inside], t_b[inside]
    if w == ("absorbing", "absorbing"):
        out[inside] = _aa("density", ti, x0, L, d, mu, xi)
    elif w == ("reflecting", "reflecting"):
        res = np.empty(ti.shape)
        eig = d * ti / L**2 >= IMAGE_SWITCH  # eigen loss <= e^5, see _aa
        if np.any(~eig):
            res[~eig] = _rr_image(ti[~eig], xi[~eig], x0, L, d, mu)
        if np.any(eig):
            res[eig] = _rr_eigen(ti[eig], xi[eig], x0, L, d, mu)
        out[inside] = res
    else:
        if mu != 0.0:
            raise _no_drift_closed_form("propagator", w)
        if w[0] == "absorbing":
            start, xf = x0, xi
        else:
            start, xf = L - x0, L - xi
        out[inside] = _aa("density", ti, start, 2.0 * L, d, 0.0, xf) + _aa(
            "density", ti, start, 2.0 * L, d, 0.0, 2.0 * L - xf
        )
    return out
