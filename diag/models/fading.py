"""Rayleigh and Rice envelope statistics in dB relative to the mean power; Rice K estimation; Rayleigh LCR/AFD.

Conventions.  ``level_db`` is the received power relative to its mean, y = 10 log10(P / Omega); the power ratio
is x = 10^(y/10).  ``k_factor`` is the linear Rice factor K = nu^2 / (2 sigma^2) (power of the steady component
over the power of the scattered part); K = 0 is Rayleigh.  ``envelope`` samples are linear amplitudes in any unit
(e.g. 10^(RSL_dBm/20)); use :func:`envelope_from_level_db` to convert.

References
----------
[1] G. L. Stüber, "Principles of Mobile Communication", 2nd ed., Kluwer, 2001, §2.1-2.3 (Rice/Rayleigh envelope,
    power pdf, level-crossing rate and average fade duration) [section numbers from memory].
[2] T. S. Rappaport, "Wireless Communications: Principles and Practice", 2nd ed., Prentice Hall, 2002, §5.7.1,
    eqs. (5.80) and (5.84) [equation numbers from memory]: N_R = sqrt(2 pi) f_m rho e^(-rho^2),
    tau = (e^(rho^2) - 1) / (rho f_m sqrt(2 pi)).
[3] A. Abdi, C. Tepedelenlioglu, M. Kaveh, G. Giannakis, "On the estimation of the K parameter for the Rice
    fading distribution", IEEE Commun. Lett. 5(3):92-94, 2001 (moment estimator from mu2 and mu4).
[4] L. J. Greenstein, D. G. Michelson, V. Erceg, "Moment-method estimation of the Ricean K-factor",
    IEEE Commun. Lett. 3(6):175-176, 1999.
[5] M. Abramowitz, I. A. Stegun, "Handbook of Mathematical Functions", 1964, §9.6-9.7 (modified Bessel
    functions: ascending series 9.6.10, asymptotic expansion 9.7.1) [equation numbers from memory].
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from diag.models._util import ArrayLike, as_float_array, like_input

__all__ = ["rayleigh_pdf_db", "rayleigh_cdf_db", "rayleigh_exceedance_db", "rice_pdf_db", "rice_cdf_db",
           "rice_exceedance_db", "k_factor_db", "k_factor_linear", "envelope_from_level_db", "rice_k_moments",
           "rice_k_mle", "RiceFit", "fit_rice", "rayleigh_level_crossing_rate_hz",
           "rayleigh_average_fade_duration_s", "doppler_from_crossing_rate_hz", "rice_level_crossing_rate_hz",
           "rice_average_fade_duration_s", "RAYLEIGH_LOG_MEAN_DB"]

_LN10_OVER_10 = math.log(10.0) / 10.0
# how far the mean in dB of a Rayleigh-faded level lies below its mean power [dB]: E[10 log10 X] = -10 gamma / ln 10
# for X exponential with mean 1 (gamma Euler's constant), 2.507 dB ("log-mean" bias; Rice fading, with a steady
# ray, has less).  Textbook result (E[ln X] = -gamma for the unit exponential), checked numerically in the tests
RAYLEIGH_LOG_MEAN_DB = 10.0 * 0.5772156649015329 / math.log(10.0)


def k_factor_db(k_factor: ArrayLike) -> ArrayLike:
    """Linear K to dB (K = 0 gives -inf)."""
    with np.errstate(divide="ignore"):
        return like_input(10.0 * np.log10(as_float_array(k_factor)), k_factor)


def k_factor_linear(k_db: ArrayLike) -> ArrayLike:
    """K in dB to linear."""
    return like_input(10.0 ** (as_float_array(k_db) / 10.0), k_db)


def envelope_from_level_db(level_db: ArrayLike) -> np.ndarray:
    """Linear amplitude 10^(level/20) from levels in dB or dBm (e.g. RSL samples)."""
    return 10.0 ** (as_float_array(level_db) / 20.0)


def _power_ratio(level_db: ArrayLike) -> np.ndarray:
    return 10.0 ** (as_float_array(level_db) / 10.0)


def rayleigh_pdf_db(level_db: ArrayLike) -> ArrayLike:
    """Density [1/dB] of the Rayleigh-faded power in dB relative to its mean.

    Power x = P/Omega is exponential, f(x) = e^(-x) [1, §2.1]; in dB f_Y(y) = e^(-x) x ln10/10.
    """
    x = _power_ratio(level_db)
    return like_input(np.exp(-x) * x * _LN10_OVER_10, level_db)  # f_X(x) |dx/dy|


def rayleigh_cdf_db(level_db: ArrayLike) -> ArrayLike:
    """P(power below level) = 1 - exp(-10^(y/10)) for Rayleigh fading [1, §2.1].

    For deep fades this is about 10^(-F/10) at y = -F: ten decibels per decade of probability.
    """
    x = _power_ratio(level_db)
    return like_input(-np.expm1(-x), level_db)


def rayleigh_exceedance_db(level_db: ArrayLike) -> ArrayLike:
    """P(power above level) = exp(-10^(y/10)) for Rayleigh fading [1, §2.1]."""
    x = _power_ratio(level_db)
    return like_input(np.exp(-x), level_db)


def _k_array(k_factor: ArrayLike) -> np.ndarray:
    k = as_float_array(k_factor)
    if np.any(k < 0):
        raise ValueError("k_factor must be >= 0 (linear ratio; use k_factor_linear for dB)")
    return k


_SERIES_UP_TO = 20.0   # |z| <= 20: ascending series (45 terms); above: the asymptotic expansion (30 terms)


def _i0e_i1e(z: ArrayLike, order_one: bool = True) -> tuple[np.ndarray, np.ndarray | None]:
    """Exponentially scaled modified Bessel functions e^-|z| I0(z) and e^-|z| I1(z) (the second only when
    ``order_one``), numpy only (scipy.special, about 0.15 s of CPU to import, is then left out of an analysis).

    |z| <= 20: the ascending series I_nu(z) = (z/2)^nu sum_k (z^2/4)^k / (k! (k + nu)!) [5, 9.6.10], 45 terms
    (the last below 1e-17 of the sum at |z| = 20); beyond: the asymptotic expansion I_nu(z) ~ e^z / sqrt(2 pi z)
    sum_k (-1)^k prod_{j<=k} (4 nu^2 - (2j - 1)^2) / (k! (8z)^k) [5, 9.7.1], 30 terms (the smallest term near
    k = 2|z| is about e^-2|z| < 1e-17).  Agrees with scipy.special.i0e / i1e within 3e-15 relative
    (tests/models/test_models_fading.py).  NaN gives NaN; +-inf gives 0.
    """
    z = np.asarray(z, dtype=float)
    a = np.abs(z)
    i0 = np.empty(a.shape)
    i1 = np.empty(a.shape) if order_one else None
    small = a <= _SERIES_UP_TO
    x = a[small]
    if x.size:
        q = 0.25 * x * x
        term0, sum0 = np.ones_like(x), np.ones_like(x)
        term1 = 0.5 * x
        sum1 = term1.copy()
        for k in range(1, 45):
            term0 = term0 * q / (k * k)
            sum0 = sum0 + term0
            if order_one:
                term1 = term1 * q / (k * (k + 1))
                sum1 = sum1 + term1
        scale = np.exp(-x)
        i0[small] = sum0 * scale
        if order_one:
            i1[small] = sum1 * scale
    large = ~small
    x = a[large]
    if x.size:
        inv_8x = 1.0 / (8.0 * x)
        term0, sum0 = np.ones_like(x), np.ones_like(x)
        term1, sum1 = np.ones_like(x), np.ones_like(x)
        for k in range(1, 30):
            odd_sq = (2 * k - 1) ** 2
            term0 = term0 * (odd_sq * inv_8x / k)
            sum0 = sum0 + term0
            if order_one:
                term1 = term1 * ((odd_sq - 4) * inv_8x / k)
                sum1 = sum1 + term1
        front = 1.0 / np.sqrt(2.0 * math.pi * x)
        i0[large] = front * sum0
        if order_one:
            i1[large] = front * sum1
    if order_one:
        i1 = np.where(z < 0, -i1, i1)
    return i0, i1


def rice_pdf_db(level_db: ArrayLike, k_factor: ArrayLike) -> ArrayLike:
    """Density [1/dB] of the Rice-faded power in dB relative to its mean.

    f(x) = (K+1) e^(-K-(K+1)x) I0(2 sqrt(K(K+1)x)) for x = P/Omega [1, §2.1.1]; f_Y(y) = f(x) x ln10/10.
    Computed with the exponentially scaled I0 to stay finite for large K.
    """
    x = _power_ratio(level_db)
    k = _k_array(k_factor)
    z = 2.0 * np.sqrt(k * (k + 1.0) * x)
    density_x = (k + 1.0) * np.exp(-k - (k + 1.0) * x + z) * _i0e_i1e(z, False)[0]  # Rice power pdf, I0 = i0e e^z
    return like_input(density_x * x * _LN10_OVER_10, level_db, k_factor)


def rice_cdf_db(level_db: ArrayLike, k_factor: ArrayLike) -> ArrayLike:
    """P(power below level) for Rice fading: 1 - Q1(sqrt(2K), sqrt(2(K+1)x)) [1, §2.1.1].

    Evaluated as the non-central chi-square law of 2(K+1)x with 2 degrees of freedom and non-centrality 2K.
    """
    x = _power_ratio(level_db)
    k = _k_array(k_factor)
    x, k = np.broadcast_arrays(x, k)
    cdf = np.where(k > 0, _ncx2_cdf_2dof(2.0 * (k + 1.0) * x, 2.0 * np.where(k > 0, k, 1.0)), -np.expm1(-x))
    return like_input(cdf, level_db, k_factor)


_SERIES_MAX_K = 50.0   # _ncx2_cdf_2dof sums its series for nc/2 <= 50 below the mean (beyond: scipy.special.chndtr)


def _ncx2_cdf_2dof(x: np.ndarray, nc: np.ndarray) -> np.ndarray:
    """``scipy.stats.ncx2.cdf(x, 2, nc)`` for nc > 0: 0 at or below 0, 1 at infinity, NaN for NaN; inside the
    support, for nc/2 <= 50 and x at most the mean nc + 2 (for the Rice law: K <= 50, levels at or below the mean
    power, which is all an analysis asks for) the Poisson mixture below, elsewhere ``scipy.special.chndtr`` (what
    ``ncx2.cdf`` calls; imported only then: scipy.special costs about 0.15 s of CPU to import, scipy.stats about
    0.35 s).  Above the mean the sum nears 1 and its rounding (a few ulps) would no longer keep it monotone.

    With y = x/2 and k = nc/2, a non-central chi-square of 2 degrees of freedom is a central one of 2 + 2J degrees,
    J ~ Poisson(k) [N. L. Johnson, S. Kotz, N. Balakrishnan, "Continuous Univariate Distributions", vol. 2, 2nd ed.,
    Wiley, 1995, ch. 29, eq. (29.2), from memory], and P(chi2 of 2j + 2 degrees <= x) = P(I >= j + 1) with
    I ~ Poisson(y).  So the CDF is sum_{i>=1} P(I = i) P(J <= i - 1): positive terms only, no cancellation in either
    tail; summed until i = y + k + 12 sqrt(y + k) + 40 (the rest below 1e-17 of the sum).  Within 3e-15 relative
    of scipy's bits (tests/models/test_models_fading.py).
    """
    x, nc = np.broadcast_arrays(np.asarray(x, dtype=float), np.asarray(nc, dtype=float))
    out = np.zeros(x.shape)
    out[np.isnan(x)] = np.nan
    out[x == np.inf] = 1.0
    inside = (x > 0) & (x < np.inf)
    summed = inside & (nc <= 2.0 * _SERIES_MAX_K) & (x <= nc + 2.0)
    if summed.any():
        y, k = 0.5 * x[summed], 0.5 * nc[summed]
        top = float(np.max(y + k))
        p_i = np.exp(-y)             # P(I = i), I ~ Poisson(y), from i = 0
        q_j = np.exp(-k)             # P(J = j), J ~ Poisson(k), from j = 0
        below = q_j.copy()           # P(J <= i - 1)
        total = np.zeros(y.shape)
        for i in range(1, int(top + 12.0 * math.sqrt(top) + 40.0) + 1):
            p_i = p_i * y / i
            total = total + p_i * below
            q_j = q_j * k / i
            below = below + q_j
        out[summed] = total
    rest = inside & ~summed
    if rest.any():
        from scipy import special

        out[rest] = special.chndtr(x[rest], 2.0, nc[rest])
    return out


def rice_exceedance_db(level_db: ArrayLike, k_factor: ArrayLike) -> ArrayLike:
    """P(power above level) for Rice fading: Q1(sqrt(2K), sqrt(2(K+1)x)) [1, §2.1.1]."""
    x = _power_ratio(level_db)
    k = _k_array(k_factor)
    x, k = np.broadcast_arrays(x, k)
    from scipy import stats

    sf = np.where(k > 0, stats.ncx2.sf(2.0 * (k + 1.0) * x, 2.0, 2.0 * np.where(k > 0, k, 1.0)), np.exp(-x))
    return like_input(sf, level_db, k_factor)


def _clean_envelope(envelope: ArrayLike) -> np.ndarray:
    r = as_float_array(envelope).ravel()
    r = r[np.isfinite(r)]
    if np.any(r < 0):
        raise ValueError("envelope samples must be >= 0 (linear amplitude; see envelope_from_level_db)")
    if r.size < 10:
        raise ValueError(f"need at least 10 finite envelope samples to estimate K, got {r.size}")
    return r


def rice_k_moments(envelope: ArrayLike) -> float:
    """Rice K (linear) from the second and fourth envelope moments.

    K = sqrt(2 mu2^2 - mu4) / (mu2 - sqrt(2 mu2^2 - mu4)), mu_n = E[r^n] [3]; equivalently the power-domain form
    of [4].  Returns 0 when 2 mu2^2 <= mu4 (fading at least as deep as Rayleigh) and inf for a constant envelope.
    NaNs are ignored.
    """
    r = _clean_envelope(envelope)
    scale = np.mean(r * r)
    if scale <= 0:
        raise ValueError("envelope samples are all zero")
    p = r * r / scale  # normalised power: K is scale-free
    mu2 = 1.0
    mu4 = float(np.mean(p * p))
    d = 2.0 * mu2 * mu2 - mu4
    if d <= 0:
        return 0.0
    s = math.sqrt(d)
    if mu2 - s <= 1e-12:
        return math.inf
    return s / (mu2 - s)


def _rice_nll_gradient_hessian(u: float, s_log: float, r2_sum: float, r: np.ndarray) -> tuple:
    """Negative log-likelihood of Rice envelope samples ``r``, its gradient and its Hessian in (u, s), K = u^2,
    Omega = e^s (``r2_sum`` = sum r^2).

    Per sample, dropping constants: l = log(K+1) - s - (K+1) r^2 e^(-s) - K + log I0(z), z = 2 r sqrt(K(K+1)/Omega)
    [1, §2.1.1: f(r) = 2r(K+1)/Omega exp(-K - (K+1) r^2/Omega) I0(z)].  The u = sqrt(K) parameterisation keeps z
    smooth at K = 0.

    With c = 2 u sqrt(1 + u^2) e^(-s/2) every sample's Bessel argument is z = c r, so the log-likelihood is
    A(u, s) + G(c) with A = n (log(1 + u^2) - s - u^2) - (1 + u^2) e^(-s) sum r^2 and G(c) = sum log I0(c r).
    G' = sum r R(z), G'' = sum r^2 R'(z) with R = I1/I0 and R' = 1 - R/z - R^2 (R'(0) = 1/2), from
    I0' = I1 and I1' = I0 - I1/z [Abramowitz & Stegun 9.6.27, from memory]; the chain rule does the rest.
    """
    n = r.size
    k = u * u
    e_s = math.exp(-s_log)
    root_k1 = math.sqrt(k + 1.0)
    half = math.exp(-0.5 * s_log)
    c = 2.0 * u * root_k1 * half
    c_u = 2.0 * half * (2.0 * k + 1.0) / root_k1
    c_uu = 2.0 * half * u * (2.0 * k + 3.0) / (root_k1 * root_k1 * root_k1)
    z = c * r
    i0e, i1e = _i0e_i1e(z)
    ratio = i1e / i0e                                        # R(z) = I1(z)/I0(z)
    with np.errstate(divide="ignore", invalid="ignore"):
        d_ratio = np.where(z > 0, 1.0 - ratio / z - ratio * ratio, 0.5)   # R'(z)
    g0 = float(np.sum(np.log(i0e) + z))                      # G(c) = sum log I0(z)
    g1 = float(np.sum(r * ratio))                            # G'(c)
    g2 = float(np.sum(r * r * d_ratio))                      # G''(c)
    se = r2_sum * e_s
    ll = n * (math.log(k + 1.0) - s_log - k) - (k + 1.0) * se + g0
    ll_u = n * (2.0 * u / (k + 1.0) - 2.0 * u) - 2.0 * u * se + g1 * c_u
    ll_s = -n + (k + 1.0) * se - 0.5 * g1 * c
    ll_uu = n * (2.0 * (1.0 - k) / ((k + 1.0) * (k + 1.0)) - 2.0) - 2.0 * se + g2 * c_u * c_u + g1 * c_uu
    ll_us = 2.0 * u * se - 0.5 * (g2 * c * c_u + g1 * c_u)
    ll_ss = -(k + 1.0) * se + 0.25 * (g2 * c * c + g1 * c)
    return -ll, np.array([-ll_u, -ll_s]), np.array([[-ll_uu, -ll_us], [-ll_us, -ll_ss]])


_U_BOUNDS = (0.0, 100.0)     # u = sqrt(K): K in [0, 10^4]
_S_BOUNDS = (-3.0, 3.0)      # s = log Omega on unit mean power: Omega within e^-3 .. e^3 of the sample mean power


def _rice_mle_newton(r: np.ndarray, u0: float, s0: float = 0.0, max_iter: int = 200) -> tuple[float, float]:
    """Maximum-likelihood (u, s) of unit-mean-power Rice envelope samples ``r`` (K = u^2, Omega = e^s) in the box
    u in [0, 100], s in [-3, 3], started from (u0, s0): a projected Newton method on this smooth 2-parameter problem
    (D. P. Bertsekas, "Projected Newton methods for optimization problems with simple constraints", SIAM J. Control
    Optim. 20(2):221-246, 1982), with the analytic gradient and Hessian of :func:`_rice_nll_gradient_hessian`.

    Each step: a parameter at a bound whose gradient points out of the box is held there; on the others the Newton
    direction, with the Hessian's eigenvalues lifted to their magnitude (at least 1e-8 of the largest), so that a
    saddle or concave region still gives a descent direction.  Far from the optimum (a lifted Hessian or a step
    over 1e-6) the step is projected onto the box and halved until the Armijo condition holds (decrease at least
    1e-4 of the first-order one).  Near it the full Newton step is taken: there the likelihood's rounding (about
    1e-13 of its value) exceeds the decrease, and only the gradient still points the way.  Stops after a step of at
    most 1e-9 (the next would move about its square).  The score in K vanishes at K = 0 for every sample, so where
    the likelihood is largest at K = 0 Newton closes in on u = 0 only linearly (u shrinks by a third per step, the
    likelihood being quartic in u there): once a step shrinks a small u (< 0.01) by a quarter or more, or no step
    from a small u decreases the likelihood any more, u = 0 itself is tried and kept if its likelihood is not lower
    beyond rounding (1e-13 of its value; then only s moves).  The optimum is the one scipy's L-BFGS-B finds from the
    same start, to its tolerance (``tests/models/test_models_fading.py``).
    """
    lo = np.array([_U_BOUNDS[0], _S_BOUNDS[0]])
    hi = np.array([_U_BOUNDS[1], _S_BOUNDS[1]])
    x = np.clip(np.array([u0, s0], dtype=float), lo, hi)
    r2_sum = float(np.sum(r * r))

    def evaluate(at):
        return _rice_nll_gradient_hessian(float(at[0]), float(at[1]), r2_sum, r)

    def zero_if_not_worse(at, f_at):
        zero = np.array([0.0, at[1]])
        f0, g0, h0 = evaluate(zero)
        return (zero, f0, g0, h0) if f0 <= f_at + 1e-13 * abs(f_at) else None   # not lower beyond rounding

    f, g, h = evaluate(x)
    for _ in range(max_iter):
        held = ((x <= lo) & (g >= 0)) | ((x >= hi) & (g <= 0))   # at a bound, pushed outwards
        free = ~held
        if not free.any():
            break
        vals, vecs = np.linalg.eigh(h[np.ix_(free, free)])
        lifted = bool(np.any(vals <= 0))
        vals = np.maximum(np.abs(vals), 1e-8 * max(float(np.max(np.abs(vals))), 1e-300))
        step = np.zeros(2)
        step[free] = -(vecs @ ((vecs.T @ g[free]) / vals))
        size = float(np.max(np.abs(step)))
        if not lifted and size <= 1e-6:                  # quadratic region: the full step, no line search
            x = np.clip(x + step, lo, hi)
            if size <= 1e-9:
                break
            f, g, h = evaluate(x)
            continue
        near_zero = bool(free[0]) and 0.0 < x[0] < 0.01
        if near_zero and step[0] <= -0.25 * x[0]:       # closing in on K = 0: try it
            at_zero = zero_if_not_worse(x, f)
            if at_zero is not None:
                x, f, g, h = at_zero
                continue
        t = 1.0
        while True:
            x_new = np.clip(x + t * step, lo, hi)
            moved = x_new - x
            f_new, g_new, h_new = evaluate(x_new)
            if f_new <= f + 1e-4 * float(g @ moved):
                break
            t *= 0.5
            if t < 1e-12:
                break
        if t < 1e-12:                                    # no decrease left along this direction: done, unless
            at_zero = zero_if_not_worse(x, f) if near_zero else None   # a flat likelihood still allows K = 0
            if at_zero is None:
                break
            x, f, g, h = at_zero
            continue
        x, f, g, h = x_new, f_new, g_new, h_new
    return float(x[0]), float(x[1])


def rice_k_mle(envelope: ArrayLike) -> float:
    """Rice K (linear) by maximum likelihood over (K, Omega) of the Rice envelope density [1, §2.1.1].

    A projected Newton method with the analytic gradient and Hessian over (sqrt(K), log Omega), K in [0, 10^4],
    started from the moment estimate (:func:`_rice_mle_newton`).  NaNs are ignored.
    """
    return fit_rice(envelope, method="mle").k_factor


@dataclass(frozen=True)
class RiceFit:
    """A Rice fit to envelope samples.

    Attributes
    ----------
    k_factor : linear K (0 = Rayleigh)
    k_factor_db : 10 log10 K [dB] (-inf for K = 0)
    mean_power : Omega = E[r^2] of the fitted law, in the square of the envelope's unit
    n_samples : finite samples used
    method : "moments" or "mle"
    """

    k_factor: float
    k_factor_db: float
    mean_power: float
    n_samples: int
    method: str

    def to_dict(self) -> dict:
        return {"k_factor": self.k_factor, "k_factor_db": self.k_factor_db, "mean_power": self.mean_power,
                "n_samples": self.n_samples, "method": self.method}


def fit_rice(envelope: ArrayLike, method: str = "mle") -> RiceFit:
    """Fit a Rice law to envelope samples by ``method`` "moments" ([3]) or "mle" (maximum likelihood)."""
    r = _clean_envelope(envelope)
    scale = float(np.mean(r * r))
    if scale <= 0:
        raise ValueError("envelope samples are all zero")
    k0 = rice_k_moments(r)
    if method == "moments":
        k, omega = k0, scale
    elif method == "mle":
        rn = r / math.sqrt(scale)  # fit on unit mean power, rescale after
        u_start = math.sqrt(min(k0, 1e4)) if math.isfinite(k0) else 100.0
        # u = 0 is always a stationary point (the likelihood is even in u), so never start exactly there
        u, s_log = _rice_mle_newton(rn, max(u_start, 0.3))
        k, omega = u * u, scale * math.exp(s_log)  # K = u^2
    else:
        raise ValueError(f"method must be 'moments' or 'mle', not {method!r}")
    k_db = 10.0 * math.log10(k) if k > 0 else -math.inf
    return RiceFit(k_factor=float(k), k_factor_db=k_db, mean_power=float(omega), n_samples=int(r.size), method=method)


def _rho(level_db: ArrayLike) -> np.ndarray:
    return np.sqrt(_power_ratio(level_db))  # rho = R / R_rms


def rayleigh_level_crossing_rate_hz(level_db: ArrayLike, doppler_hz: ArrayLike) -> ArrayLike:
    """Rayleigh level-crossing rate (crossings per second in one direction) [Hz].

    N_R = sqrt(2 pi) f_m rho e^(-rho^2), rho^2 = 10^(level/10) with the level relative to the mean power and f_m
    the maximum Doppler (fading bandwidth) of a Clarke/Jakes spectrum [2, eq. (5.80)].
    """
    rho = _rho(level_db)
    fm = as_float_array(doppler_hz)
    rate = math.sqrt(2.0 * math.pi) * fm * rho * np.exp(-rho * rho)  # N_R
    return like_input(rate, level_db, doppler_hz)


def rayleigh_average_fade_duration_s(level_db: ArrayLike, doppler_hz: ArrayLike) -> ArrayLike:
    """Rayleigh average fade duration below a level [s]: (e^(rho^2) - 1) / (rho f_m sqrt(2 pi)) [2, eq. (5.84)].

    Equals P(below level) / N_R.
    """
    rho = _rho(level_db)
    fm = as_float_array(doppler_hz)
    duration = np.expm1(rho * rho) / (rho * fm * math.sqrt(2.0 * math.pi))  # tau
    return like_input(duration, level_db, doppler_hz)


def doppler_from_crossing_rate_hz(crossing_rate_hz: ArrayLike, level_db: ArrayLike) -> ArrayLike:
    """Fading bandwidth f_m implied by an observed crossing rate at a level (inverse of the Rayleigh N_R) [Hz]."""
    rho = _rho(level_db)
    fm = as_float_array(crossing_rate_hz) / (math.sqrt(2.0 * math.pi) * rho * np.exp(-rho * rho))
    return like_input(fm, crossing_rate_hz, level_db)


def rice_level_crossing_rate_hz(level_db: ArrayLike, k_factor: ArrayLike, doppler_hz: ArrayLike) -> ArrayLike:
    """Rice level-crossing rate with a static (zero-Doppler) steady component [Hz] [1, §2.3, from memory].

    N_R = sqrt(2 pi (K+1)) f_m rho e^(-K - (K+1) rho^2) I0(2 rho sqrt(K (K+1))), rho^2 = 10^(level/10) relative to
    the mean power; the scattered part has a Clarke/Jakes spectrum of maximum Doppler f_m.  K = 0 gives the
    Rayleigh rate.
    """
    rho = _rho(level_db)
    k = _k_array(k_factor)
    fm = as_float_array(doppler_hz)
    z = 2.0 * rho * np.sqrt(k * (k + 1.0))
    rate = (np.sqrt(2.0 * math.pi * (k + 1.0)) * fm * rho
            * np.exp(-k - (k + 1.0) * rho * rho + z) * _i0e_i1e(z, False)[0])  # N_R, I0 = i0e e^z
    return like_input(rate, level_db, k_factor, doppler_hz)


def rice_average_fade_duration_s(level_db: ArrayLike, k_factor: ArrayLike, doppler_hz: ArrayLike) -> ArrayLike:
    """Rice average fade duration below a level [s] = P(below level) / N_R [1, §2.3]."""
    duration = as_float_array(rice_cdf_db(as_float_array(level_db), as_float_array(k_factor))) / as_float_array(
        rice_level_crossing_rate_hz(as_float_array(level_db), as_float_array(k_factor), as_float_array(doppler_hz)))
    return like_input(duration, level_db, k_factor, doppler_hz)
