"""Survival and tails: the survival curve S(t) with pointwise and simultaneous
intervals, the restricted mean E[min(T, tau)] (the area under S up to tau), and the
exponential tail fit with its extrapolated mean first-passage time.

Each takes the lazy Dataset of :func:`sweep.open` (or a selection of it, one point
included); arguments are checked by :func:`sweep.stats.validate.statistic` before
any data are read. First-passage times are read out of core as
:mod:`sweep.stats.absorbed` describes.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import xarray as xr
from numpy.typing import ArrayLike, NDArray
from scipy import stats as scipy_stats

from sweep.stats.absorbed import Absorbed, absorbed_walkers, recorded_horizon
from sweep.stats.core import (
    LEVEL,
    finished_walkers,
    result_dataset,
    warn_censored,
    wilson_interval,
    z_value,
)
from sweep.stats.validate import FIRST_PASSAGE, SURVIVAL, WALKERS, statistic

#: Smallest number of surviving walkers at a survival-grid time used by
#: :func:`tail_fit`: keeps the delta-method variance of log S (1 - S) / (n S) valid.
TAIL_MIN_COUNT = 30

#: Default upper end of the survival range fitted by :func:`tail_fit` (the late tail).
TAIL_S_MAX = 0.5


@statistic(WALKERS, SURVIVAL)
def survival(ds: xr.Dataset, level: float = LEVEL) -> xr.Dataset:
    """Survival S(t) on the stored time grid with pointwise binomial (Wilson) intervals.

    Returns
    -------
    xarray.Dataset
        dims (point, time).
    """
    n = ds["walkers_done"]
    count = ds["survival_count"].compute()
    s = count / n
    se = np.sqrt(s * (1 - s) / n)
    lower, upper = wilson_interval(count, n, level)
    return xr.Dataset(
        {"estimate": s, "stderr": se, "lower": lower, "upper": upper, "n": n},
        attrs={"level": level, "interval": "Wilson score"},
    )


@statistic(WALKERS, SURVIVAL)
def survival_band(ds: xr.Dataset, level: float = LEVEL) -> xr.Dataset:
    """Simultaneous confidence band on the whole survival curve S(t).

    The Dvoretzky-Kiefer-Wolfowitz inequality with Massart's tight constant,
    P(sup_t |S_n(t) - S(t)| > eps) <= 2 exp(-2 n eps^2), gives the band
    S_n(t) +- eps with eps = sqrt(ln(2 / alpha) / (2 n)), alpha = 1 - level, clipped to
    [0, 1]. It holds for every t at once (not only at the stored grid times), for any
    distribution, so its coverage is at least ``level`` (conservative on a finite
    grid). Censoring at the horizon does not matter: the grid ends before it.

    Sources: A. Dvoretzky, J. Kiefer & J. Wolfowitz, Ann. Math. Statist. 27, 642 (1956);
    P. Massart, Ann. Probab. 18, 1269 (1990).

    Parameters
    ----------
    ds : xarray.Dataset
        A store's Dataset (or selection) with ``survival_count`` (point, time) and
        ``walkers_done`` (point,).
    level : float
        Simultaneous coverage of the band, default 0.95.

    Returns
    -------
    xarray.Dataset
        dims (point, time): ``estimate`` (fraction still free, dimensionless),
        ``stderr`` (pointwise binomial sqrt(S (1 - S) / n)), ``lower``, ``upper`` (the
        band), ``half_width`` (eps, (point,)) and ``n`` (walkers, (point,)).
    """
    alpha = 1.0 - level
    n = finished_walkers(ds)
    count = np.asarray(
        ds["survival_count"].transpose("point", "time").values, np.float64
    )
    with np.errstate(divide="ignore", invalid="ignore"):
        n_ok = np.where(n > 0, n, np.nan)[:, None]
        s = count / n_ok
        eps = np.sqrt(np.log(2.0 / alpha) / (2.0 * n_ok))
        se = np.sqrt(s * (1.0 - s) / n_ok)
    return result_dataset(
        ds,
        ("point", "time"),
        {
            "estimate": s,
            "stderr": se,
            "lower": np.clip(s - eps, 0.0, 1.0),
            "upper": np.clip(s + eps, 0.0, 1.0),
            "half_width": eps[:, 0],
            "n": n,
        },
        coords={"time": ds["time"].values},
        attrs={
            "level": level,
            "interval": "simultaneous Dvoretzky-Kiefer-Wolfowitz band (Massart 1990)",
        },
    )


def _restricted(
    ds: xr.Dataset,
    absorbed: Absorbed,
    horizon: Any,
    who: str,
    fallback: float = np.inf,
) -> dict[str, NDArray[np.float64]]:
    """Mean and variance of min(T, tau) over all walkers (two passes, no warnings).

    tau is ``horizon`` if given, else the recorded horizon, else ``fallback``; it
    must not exceed the sweep's horizon where walkers are censored, since min(T, tau)
    of a censored walker is only known up to there.
    """
    n_points = ds.sizes["point"]
    recorded = recorded_horizon(ds)
    if horizon is not None:
        tau = np.asarray(horizon, dtype=np.float64)
        tau = np.broadcast_to(tau, (n_points,)).copy()
    else:
        tau = recorded if recorded is not None else np.full(n_points, fallback)
    n = finished_walkers(ds)
    cut = xr.DataArray(tau, dims="point")
    first = absorbed.sums(
        n=lambda v: 1.0,
        s1=lambda v: xr.where(v < cut, v, cut),
        beyond=lambda v: v >= cut,
    )
    n_cens = n - first["n"]
    unknown = (n_cens > 0) & (tau > (np.inf if recorded is None else recorded))
    if horizon is not None and recorded is not None and np.any(unknown):
        raise ValueError(
            f"sweep.stats.{who}: horizon={horizon!r} exceeds the sweep's horizon "
            f"{recorded.tolist()} at points with censored walkers; min(T, tau) is "
            "unknown for them beyond it. Use a horizon <= the sweep's."
        )
    if np.any((n_cens > 0) & ~np.isfinite(tau)):
        raise ValueError(
            f"sweep.stats.{who}: the Dataset does not record the horizon (not swept, "
            "no fpt_histogram) and some walkers are censored; pass horizon= (the "
            "[time] horizon of the sweep definition)."
        )
    with np.errstate(divide="ignore", invalid="ignore"):
        tail = np.where(n_cens > 0, tau * n_cens, 0.0)
        mean = (first["s1"] + tail) / np.where(n > 0, n, np.nan)
    m = xr.DataArray(np.nan_to_num(mean), dims="point")
    second = absorbed.sums(ss=lambda v: (xr.where(v < cut, v, cut) - m) ** 2)
    with np.errstate(divide="ignore", invalid="ignore"):
        ss = second["ss"] + np.where(n_cens > 0, n_cens * (tau - mean) ** 2, 0.0)
        var = ss / (n - 1)
    return {
        "tau": tau,
        "mean": mean,
        "var": var,
        "n": n,
        "n_censored": n_cens,
        "n_beyond": n_cens + first["beyond"],
    }


@statistic(WALKERS, FIRST_PASSAGE)
def restricted_mean(
    ds: xr.Dataset, level: float = LEVEL, *, horizon: ArrayLike | None = None
) -> xr.Dataset:
    """Restricted mean first-passage time E[min(T, tau)] = integral_0^tau S(t) dt.

    Exact from per-walker data: each absorbed walker contributes min(T, tau), each
    censored walker tau (tau must not exceed the sweep's horizon). Unlike the mean
    over absorbed walkers it is unbiased for its own target whatever the censoring;
    it is the "restricted mean survival time" of survival analysis (J. O. Irwin,
    J. Hyg. 47, 188 (1949); P. Royston & M. K. B. Parmar, BMC Med. Res. Methodol.
    13, 152 (2013)). Standard error: the sample standard deviation of min(T, tau)
    over all n walkers / sqrt(n) (two passes). When some walker has T > tau a
    :class:`~sweep.errors.SweepWarning` says that this is a restricted mean, not the
    mean first-passage time (see :func:`tail_fit` for an extrapolated mean).

    Aggregate-only stores use the bin midpoints (bias at most half a bin width).

    Parameters
    ----------
    ds : xarray.Dataset
        Dataset (or selection) with ``first_passage_time`` or ``fpt_histogram`` and
        ``walkers_done``.
    level : float
        Confidence level of the interval.
    horizon : float or array of float (point,), optional
        tau in time units; default the sweep's horizon when the Dataset records it
        (a swept ``horizon`` coordinate, ``attrs["horizon"]`` or the fpt histogram's
        span). Required when walkers are censored and the horizon is not recorded.

    Returns
    -------
    xarray.Dataset
        dims (point,): ``estimate`` (time units), ``stderr``, ``lower``, ``upper``,
        ``n`` (walkers), ``censored`` (fraction free at the horizon), ``horizon``
        (tau).

    Raises
    ------
    ValueError
        If tau is unknown but needed, or exceeds the recorded horizon.
    """
    r = _restricted(ds, absorbed_walkers(ds), horizon, "restricted_mean")
    n, tau = r["n"], r["tau"]
    with np.errstate(divide="ignore", invalid="ignore"):
        se = np.sqrt(r["var"] / n)
        beyond = r["n_beyond"] / np.where(n > 0, n, np.nan)
        censored = r["n_censored"] / np.where(n > 0, n, np.nan)
    warn_censored(
        beyond,
        "restricted_mean is E[min(T, horizon)], the area under S(t) up to the "
        "horizon, not the mean first-passage time; see tail_fit for an "
        "extrapolated mean.",
    )
    z = z_value(level)
    return result_dataset(
        ds,
        ("point",),
        {
            "estimate": r["mean"],
            "stderr": se,
            "lower": r["mean"] - z * se,
            "upper": r["mean"] + z * se,
            "n": n,
            "censored": censored,
            "horizon": tau,
        },
        attrs={"level": level, "interval": "normal", "estimand": "E[min(T, horizon)]"},
    )


def gls_exponential(
    t: NDArray[np.float64], y: NDArray[np.float64], n: float
) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64], float]:
    """Fit log S = b0 + b1 t by GLS with the binomial covariance of log S_n.

    Cov(log S_n(t_i), log S_n(t_j)) = (1 / S(t_i) - 1) / n for t_i <= t_j (the
    empirical survival function's covariance S(t_j)(1 - S(t_i)) / n divided by
    S(t_i) S(t_j)). It has the Brownian form v_min(i,j) with v increasing, so the GLS
    fit is the weighted fit of the increments of y, which are uncorrelated with
    variances v_i - v_(i-1). v comes from the fitted model (a few iterations), so a
    stretch of the grid without absorptions does not get zero variance.

    Returns (beta, cov_beta, coefficients (2, k) with beta = coefficients @ y, chi^2).
    """
    lam = -(y[-1] - y[0]) / (t[-1] - t[0])
    b0 = y[0] + lam * t[0]
    beta = np.array([b0, -lam])
    x = np.column_stack([np.ones_like(t), t])
    dx = np.vstack([x[:1], np.diff(x, axis=0)])
    dy = np.concatenate([y[:1], np.diff(y)])
    for _ in range(6):
        s_model = np.exp(np.minimum(beta[0] + beta[1] * t, -1e-12))
        v = np.maximum.accumulate((1.0 / s_model - 1.0) / n)
        dv = np.maximum(np.diff(np.concatenate([[0.0], v])), 1e-300)
        a = dx.T / dv
        cov = np.linalg.inv(a @ dx)
        coef_dy = cov @ a
        new = coef_dy @ dy
        if np.allclose(new, beta, rtol=1e-12, atol=0.0):
            beta = new
            break
        beta = new
    r = dy - dx @ beta
    chi2 = float(np.sum(r * r / dv))
    # beta = coef_dy @ D y with D the differencing matrix: coefficients on y itself.
    coef = coef_dy - np.concatenate([coef_dy[:, 1:], np.zeros((2, 1))], axis=1)
    return beta, cov, coef, chi2


@statistic(WALKERS, SURVIVAL, FIRST_PASSAGE)
def tail_fit(
    ds: xr.Dataset,
    t_min: float | None = None,
    level: float = LEVEL,
    *,
    s_max: float = TAIL_S_MAX,
    min_count: int = TAIL_MIN_COUNT,
    horizon: ArrayLike | None = None,
) -> xr.Dataset:
    """Exponential tail S(t) ~ A exp(-lambda t) and the tail-extrapolated mean FPT.

    In a bounded domain the survival probability decays as A exp(-lambda_1 t) once
    higher eigenmodes have died out (lambda_1 the smallest eigenvalue of -D Laplacian
    with the absorbing conditions; S. Redner, *A Guide to First-Passage Processes*
    (2001) ch. 2). The fit uses the stored survival grid on the window where
    S_n(t) <= ``s_max`` (or t >= ``t_min`` when given) and at least ``min_count``
    walkers survive: generalized least squares (A. C. Aitken, Proc. R. Soc. Edinb.
    55, 42 (1935)) of log S_n(t) on t with the binomial covariance of the empirical
    survival function, Cov(S_n(s), S_n(t)) = S(t)(1 - S(s)) / n for s <= t (G. R.
    Shorack & J. A. Wellner, *Empirical Processes with Applications to Statistics*
    (1986) ch. 3), by the delta method on the log. Grid points share walkers, so an
    ordinary diagonal-weight fit would understate the errors; GLS does not.

    The extrapolated mean is E[T] ~ E[min(T, c)] + S(c) / lambda with c the horizon
    (or the last grid time if the Dataset does not record it): the exact restricted
    mean plus the exponential tail beyond c. Its standard error propagates the
    joint covariance of the restricted mean, S_n(c) and lambda (delta method, all
    three computed from the same walkers). It is only as good as the exponential
    model: check ``fit_pvalue`` (chi-square of the GLS residuals, k - 2 degrees of
    freedom) and that the window lies in the late tail.

    Parameters
    ----------
    ds : xarray.Dataset
        Dataset (or selection) with ``survival_count`` (point, time) and first-passage
        data (``first_passage_time`` or ``fpt_histogram``).
    t_min : float, optional
        Start of the fitted window, in time units (default: where S_n <= s_max).
    level : float
        Confidence level of the intervals.
    s_max : float
        Largest survival fraction in the default window.
    min_count : int
        Fewest surviving walkers at a fitted grid time.
    horizon : float or array of float (point,), optional
        Cut c of the extrapolated mean (<= the sweep's horizon); see above.

    Returns
    -------
    xarray.Dataset
        dims (point, parameter) with ``parameter`` = ["rate", "amplitude", "mean"]
        (lambda in 1 / time units, A dimensionless, extrapolated mean in time
        units): ``estimate``, ``stderr``, ``lower``, ``upper`` (the amplitude's
        interval is exp of the interval of log A); and (point,) ``window_start``,
        ``window_end``, ``window_points``, ``fit_pvalue``, ``cut``, ``n``. NaN where
        the window has fewer than two grid times.
    """
    z = z_value(level)
    n_all = finished_walkers(ds)
    count = np.asarray(
        ds["survival_count"].transpose("point", "time").values, np.float64
    )
    times = np.asarray(ds["time"].values, dtype=np.float64)
    absorbed = absorbed_walkers(ds)
    r = _restricted(ds, absorbed, horizon, "tail_fit", fallback=float(times[-1]))
    cut, n_cens = r["tau"], r["n_censored"]
    # Tail sums of min(T, c) over T >= t_j, for the covariances of the restricted
    # mean with the survival curve: bins [t_j, t_j+1), [t_K, c), [c, inf).
    grid = np.minimum(times[None, :], cut[:, None])
    edges = np.concatenate(
        [grid, cut[:, None], np.full((n_all.size, 1), np.inf)], axis=1
    )
    bin_count, bin_sum = absorbed.binned(edges)
    tail = np.cumsum(bin_sum[:, -2::-1], axis=1)[:, ::-1][:, : times.size]
    tail = tail + (cut * bin_count[:, -1])[:, None]

    n_points = n_all.size
    est, se = np.full((n_points, 3), np.nan), np.full((n_points, 3), np.nan)
    lower, upper = np.full((n_points, 3), np.nan), np.full((n_points, 3), np.nan)
    start, end = np.full(n_points, np.nan), np.full(n_points, np.nan)
    k_used, pvalue = np.zeros(n_points, np.int64), np.full(n_points, np.nan)
    for p in range(n_points):
        n = n_all[p]
        if n <= 0:
            continue
        s_obs = count[p] / n
        sel = (count[p] >= min_count) & (times > 0) & (times <= cut[p])
        sel &= (s_obs <= s_max) if t_min is None else (times >= t_min)
        sel &= s_obs < 1.0
        idx = np.flatnonzero(sel)
        if idx.size < 2 or not s_obs[idx[-1]] < s_obs[idx[0]]:
            continue
        t, y = times[idx], np.log(s_obs[idx])
        beta, cov, coef, chi2 = gls_exponential(t, y, n)
        lam, se_lam = -beta[1], math.sqrt(cov[1, 1])
        if not lam > 0:
            continue
        # Delta method for E = RM + C / lambda; C = S_n(c), y = log S_n(t_i).
        rm, c_frac, s_i = r["mean"][p], r["n_beyond"][p] / n, s_obs[idx]
        q_i = (tail[p, idx] + cut[p] * n_cens[p]) / n  # E[min(T, c) 1{T >= t_i}]
        cov_rm_y = (q_i - rm * s_i) / (n * s_i)
        cov_c_y = c_frac * (1.0 - s_i) / (n * s_i)
        # dE/dy = (dE/dlam)(dlam/dy) = (-C / lam^2)(-coef[1]).
        g_y = c_frac / lam**2 * coef[1]
        var_e = (
            r["var"][p] / n
            + c_frac * (1.0 - c_frac) / n / lam**2
            + (c_frac / lam**2) ** 2 * cov[1, 1]
            + 2.0 / lam * c_frac * (cut[p] - rm) / n
            + 2.0 * float(g_y @ cov_rm_y)
            + 2.0 / lam * float(g_y @ cov_c_y)
        )
        extrap = rm + (c_frac / lam if c_frac > 0 else 0.0)
        se_e = math.sqrt(max(var_e, 0.0))
        se_b0 = math.sqrt(cov[0, 0])
        est[p] = [lam, math.exp(beta[0]), extrap]
        se[p] = [se_lam, math.exp(beta[0]) * se_b0, se_e]
        lower[p] = [lam - z * se_lam, math.exp(beta[0] - z * se_b0), extrap - z * se_e]
        upper[p] = [lam + z * se_lam, math.exp(beta[0] + z * se_b0), extrap + z * se_e]
        start[p], end[p], k_used[p] = t[0], t[-1], idx.size
        if idx.size > 2:
            pvalue[p] = float(scipy_stats.chi2.sf(chi2, idx.size - 2))
    return result_dataset(
        ds,
        ("point", "parameter"),
        {
            "estimate": est,
            "stderr": se,
            "lower": lower,
            "upper": upper,
            "window_start": start,
            "window_end": end,
            "window_points": k_used,
            "fit_pvalue": pvalue,
            "cut": cut,
            "n": n_all,
        },
        coords={"parameter": ["rate", "amplitude", "mean"]},
        attrs={
            "level": level,
            "model": "S(t) = amplitude * exp(-rate * t) on the window",
            "interval": "normal (GLS / delta method); amplitude log-normal",
        },
    )
