"""Hierarchical population inference from per-object posterior samples.

Each object ``n`` (a planet) comes with ``K`` posterior samples ``w_nk`` drawn
under an interim prior ``p0``.  The likelihood of population parameters
``theta`` is the importance-sampling estimate of Hogg, Myers & Bovy (2010)

.. math:: L(\\theta) \\approx \\prod_n \\frac{1}{K} \\sum_k
          \\frac{f_\\theta(w_{nk})}{p_0(w_{nk})},

sampled with emcee over the population parameters (log-uniform hyperpriors,
stated in the result).  Models: ``Beta(alpha, beta)`` and a Rayleigh(sigma)
truncated to the support, for eccentricities ``e`` in [0, 1) and for planet
tilts ``psi`` (radians, in [0, pi]) about their system's reference plane.

The estimator degrades where ``f_theta`` puts weight where an object has few
samples; the effective sample size of the importance weights,
``ESS_n = (sum_k r_nk)^2 / sum_k r_nk^2`` with ``r = f/p0`` at the posterior
median of ``theta``, is reported per fit (minimum and median over objects),
and flagged below :data:`ESS_WARN`.

Tilts from the MCMC share one dispersion per system, so the planets of one
system are not independent objects as the estimator assumes; their interim
prior is the Rayleigh marginalised over the per-system sigma prior
(:func:`marginal_tilt_log_prior`).  Treat that fit as approximate.

References
----------
.. [1] Hogg, D. W., Myers, A. D. & Bovy, J. 2010, ApJ 725, 2166
.. [2] Kipping, D. M. 2013, MNRAS 434, L51 (Beta distribution of eccentricities)
.. [3] Foreman-Mackey, D. et al. 2013, PASP 125, 306 (emcee)
"""
from __future__ import annotations

import math

import numpy as np
from scipy import optimize, special

__all__ = ["HMBData", "MAX_FIT_SAMPLES", "samples_kept", "thinning_note", "fit_beta", "fit_rayleigh", "eccentricity_population", "start_eccentricity_population",
           "tilt_population",
           "interval"]

#: Percentiles of the reported intervals: lo/hi = 68.27 % (archsys convention), lo95/hi95 = 95 %.
_PCT = (15.8655, 50.0, 84.1345, 2.5, 97.5)
#: Log-uniform hyperprior ranges (a choice: wide enough for all published fits).
BETA_RANGE = (0.05, 50.0)
SIGMA_RANGE_ECC = (1e-3, 2.0)
SIGMA_RANGE_PSI = (1e-4, math.pi)
_E_EPS = 1e-9
#: Below this many effective samples for some object the estimate is flagged (a choice).
ESS_WARN = 10.0
#: Most samples (objects x samples per object) one fit evaluates per walker; a choice that bounds a fit's
#: cost whatever the size of the survey (see :class:`HMBData` and the survey's ``subsample`` note).
MAX_FIT_SAMPLES = 2 ** 16
#: Fewest samples per object kept when :data:`MAX_FIT_SAMPLES` thins them (a choice, above ESS_WARN).
MIN_SAMPLES_PER_OBJECT = 32
#: The measured effect of that thinning (benchmarks/population_thinning.py), stated in every thinned result.
THINNING_MEASURED = ("measured on 12 invented populations of 2000 planets thinned from 100 to 32 draws "
                     "(benchmarks/population_thinning.py): medians moved by 0.05-0.09 of the 68 % half-width "
                     "(at most 0.38), widths changed by less than 10 %, and the true values were inside the "
                     "intervals as often as with every draw")


def samples_kept(n_objects, k_available, max_samples=MAX_FIT_SAMPLES):
    """Samples per object a fit of ``n_objects`` evaluates: all ``k_available``, or fewer within ``max_samples``."""
    if max_samples is None:
        return int(k_available)
    return int(min(k_available, max(MIN_SAMPLES_PER_OBJECT, int(max_samples) // max(int(n_objects), 1))))


def thinning_note(n_objects, k_available, max_samples=MAX_FIT_SAMPLES):
    """What :data:`MAX_FIT_SAMPLES` did to a fit's samples, or None when every sample is used."""
    k = samples_kept(n_objects, k_available, max_samples)
    if k >= k_available:
        return None
    return {"samples_per_object_available": int(k_available), "samples_per_object_used": int(k),
            "selection": "even thinning of each object's samples (every (K/k)-th draw; the draws are "
                         "independent, so any subset is a random one)",
            "effect": (f"the importance-sampling likelihood of each planet is averaged over {k} instead of "
                       f"{k_available} draws: its Monte Carlo noise grows by about "
                       f"{math.sqrt(k_available / k):.2f}x; " + THINNING_MEASURED)}


def interval(x):
    """{median, lo, hi, lo95, hi95} of 1-D draws."""
    lo, med, hi, lo95, hi95 = np.percentile(np.asarray(x, dtype=float), _PCT)
    return {"median": float(med), "lo": float(lo), "hi": float(hi), "lo95": float(lo95),
            "hi95": float(hi95)}


class HMBData:
    """Samples (N, K) and interim log-prior values (N, K), clipped into the support.

    Objects with different numbers of samples are brought to the smallest
    ``K`` by even, deterministic thinning; with ``max_samples``, ``K`` is also
    at most ``max(MIN_SAMPLES_PER_OBJECT, max_samples // N)`` (the fit's cost
    is proportional to N x K; :data:`MAX_FIT_SAMPLES`).  ``k_available`` keeps
    the smallest number of samples given.  Both models have a log density
    that is linear in fixed features of the sample, ``log f = base(x) +
    sum_j c_j(theta) phi_j(x) + d(theta)``, so all walkers are evaluated with
    one small matrix product and one ``exp`` over the samples.
    """

    def __init__(self, samples, log_p0, upper, max_samples=None):
        self.k_available = min(len(s) for s in samples)
        if self.k_available < 2:
            raise ValueError("every object needs at least 2 posterior samples")
        k = samples_kept(len(samples), self.k_available, max_samples)
        take = [np.linspace(0, len(s) - 1, k).round().astype(int) for s in samples]
        x = np.stack([np.asarray(s, dtype=float)[t] for s, t in zip(samples, take)])   # (N, K)
        lp0 = np.stack([np.asarray(l, dtype=float)[t] for l, t in zip(log_p0, take)])  # (N, K)
        if not np.all(np.isfinite(lp0)):
            raise ValueError("the interim prior must be positive at every sample")
        self.upper = float(upper)
        self.x = np.clip(x, _E_EPS * upper, upper * (1.0 - _E_EPS))
        self.n, self.k = self.x.shape
        # a per-object shift keeps exp() in range; it cancels in the likelihood ratio
        self.shift = (-lp0).max(axis=1)                                                # (N,)
        neg_lp0 = (-lp0 - self.shift[:, None]).ravel()                                # (N*K,)
        # features in float32: the sums need ~1e-7 relative precision, not 1e-16
        f32 = np.float32
        # each model's features, then its base(x) and a row of ones (coefficients 1 and d(theta)), so that
        # one small matrix product gives the whole exponent
        one = np.ones_like(neg_lp0)
        self._ones = np.ones(self.k, dtype=f32)
        self._beta_feats = np.stack([np.log(self.x / upper).ravel(), np.log1p(-self.x / upper).ravel(),
                                     neg_lp0, one]).astype(f32)                        # (4, N*K)
        self._ray_feats = np.stack([(self.x ** 2).ravel(), np.log(self.x).ravel() + neg_lp0,
                                    one]).astype(f32)                                  # (3, N*K)

    def _log_like(self, coef, feats, const):
        """sum_n log (1/K) sum_k exp(base + coef . phi + const) for each walker (W,)."""
        c = np.column_stack([coef, np.ones(len(coef)), const]).astype(np.float32)   # (W, J + 2)
        expo = c @ feats                                                          # (W, N*K)
        np.minimum(expo, 80.0, out=expo)                                          # exp(80) fits float32
        np.exp(expo, out=expo)
        r = expo.reshape(len(coef), self.n, self.k)                               # (W, N, K)
        with np.errstate(divide="ignore"):
            # float32 sums of K positive terms as a matrix-vector product (numpy's reduction over a short
            # last axis is several times slower): relative error ~1e-7 K at worst, far below the Monte
            # Carlo error of the estimator itself
            sums = expo.reshape(-1, self.k) @ self._ones                                # (W*N,)
            per = np.log(sums.astype(np.float64)).reshape(len(coef), self.n) - math.log(self.k) + self.shift
        out = per.sum(axis=-1)
        return np.where(np.isfinite(out), out, -np.inf), r

    def beta(self, a, b):
        """(log L, ratios) of Beta(a, b) on [0, upper) for walkers a, b shaped (W,)."""
        a, b = np.asarray(a, dtype=float), np.asarray(b, dtype=float)
        coef = np.stack([a - 1.0, b - 1.0], axis=1)                               # (W, 2)
        const = -special.betaln(a, b) - math.log(self.upper)
        return self._log_like(coef, self._beta_feats, const)

    def rayleigh(self, s):
        """(log L, ratios) of a Rayleigh(s) truncated to [0, upper); s shaped (W,)."""
        s = np.asarray(s, dtype=float)
        log_mass = np.log(-np.expm1(-self.upper ** 2 / (2.0 * s ** 2)))         # mass inside [0, upper)
        coef = (-0.5 / s ** 2)[:, None]                                           # (W, 1)
        const = -2.0 * np.log(s) - log_mass
        return self._log_like(coef, self._ray_feats, const)

    @staticmethod
    def ess(ratios):
        """Importance-sampling effective sample size per object, (N,), first walker."""
        w = ratios[0].astype(np.float64)
        return w.sum(axis=-1) ** 2 / np.maximum((w ** 2).sum(axis=-1), 1e-300)


def _run_emcee(log_prob, start, seed, n_walkers, n_steps, n_burn):
    import emcee
    rng = np.random.default_rng(seed)
    ndim = len(start)
    p0 = np.asarray(start)[None, :] + 1e-3 * rng.standard_normal((n_walkers, ndim))
    for _ in range(50):                       # every walker must start where the posterior is > 0
        bad = ~np.isfinite(log_prob(p0))
        if not bad.any():
            break
        p0[bad] = start + 0.5 * (p0[bad] - start)
    else:
        p0[~np.isfinite(log_prob(p0))] = start
    sampler = emcee.EnsembleSampler(n_walkers, ndim, log_prob, vectorize=True)
    sampler.random_state = np.random.RandomState(int(rng.integers(2 ** 31))).get_state()
    sampler.run_mcmc(p0, n_steps, progress=False)
    chain = sampler.get_chain(discard=n_burn, flat=True)          # (n_kept, ndim)
    try:
        tau = sampler.get_autocorr_time(discard=n_burn, quiet=True, tol=0)
        tau = [float(t) for t in tau]
    except Exception:  # pragma: no cover - autocorrelation estimate failed
        tau = [None] * ndim
    acc = float(np.mean(sampler.acceptance_fraction))
    return chain, tau, acc


def _fit(data, kind, seed, n_walkers, n_steps, n_burn, sigma_range=None):
    lo_b, hi_b = math.log(BETA_RANGE[0]), math.log(BETA_RANGE[1])
    if kind == "beta":
        def log_prob(theta):
            theta = np.atleast_2d(theta)
            ok = np.all((theta > lo_b) & (theta < hi_b), axis=1)
            out = np.full(len(theta), -np.inf)
            if ok.any():
                a, b = np.exp(theta[ok, 0]), np.exp(theta[ok, 1])
                out[ok] = data.beta(a, b)[0]
            return out
        start0 = np.array([0.0, math.log(3.0)])
    else:
        lo_s, hi_s = (math.log(v) for v in sigma_range)

        def log_prob(theta):
            theta = np.atleast_2d(theta)
            ok = (theta[:, 0] > lo_s) & (theta[:, 0] < hi_s)
            out = np.full(len(theta), -np.inf)
            if ok.any():
                out[ok] = data.rayleigh(np.exp(theta[ok, 0]))[0]
            return out
        med = float(np.median(data.x))
        start0 = np.array([math.log(min(max(med / math.sqrt(2 * math.log(2)), sigma_range[0] * 2),
                                        sigma_range[1] / 2))])
    # start the walkers at the maximum of L (deterministic Nelder-Mead)
    def nll(t):
        v = log_prob(t)[0]
        return -v if np.isfinite(v) else 1e300

    res = optimize.minimize(nll, start0, method="Nelder-Mead", options={"xatol": 1e-3, "fatol": 1e-3})
    start = res.x if np.isfinite(log_prob(res.x)[0]) else start0
    # keep the start strictly inside the hyperprior box so the walker ball is valid
    box = (lo_b, hi_b) if kind == "beta" else (lo_s, hi_s)
    margin = 1e-2 * (box[1] - box[0])
    start = np.clip(start, box[0] + margin, box[1] - margin)
    chain, tau, acc = _run_emcee(log_prob, start, seed, n_walkers, n_steps, n_burn)
    params = np.exp(chain)
    med = np.median(params, axis=0)
    _, ratios = data.beta([med[0]], [med[1]]) if kind == "beta" else data.rayleigh([med[0]])
    ess = data.ess(ratios)
    diag = {"walkers": n_walkers, "steps": n_steps, "burn_in": n_burn,
            "acceptance_fraction": acc, "autocorrelation_time": tau,
            "ess_min": float(ess.min()), "ess_median": float(np.median(ess)),
            "ess_min_object": int(np.argmin(ess)), "samples_per_object": int(data.k),
            "samples_per_object_available": int(data.k_available)}
    return params, diag


def fit_beta(data: HMBData, seed=0, n_walkers=16, n_steps=1000, n_burn=300):
    """Beta(alpha, beta) population fit: {"alpha", "beta"} intervals and diagnostics."""
    params, diag = _fit(data, "beta", seed, n_walkers, n_steps, n_burn)
    return {"alpha": interval(params[:, 0]), "beta": interval(params[:, 1]),
            "hyperprior": f"log-uniform on alpha and beta in [{BETA_RANGE[0]:g}, {BETA_RANGE[1]:g}]",
            "diagnostics": diag}


def fit_rayleigh(data: HMBData, seed=0, n_walkers=12, n_steps=1000, n_burn=300, sigma_range=None):
    """Rayleigh(sigma) population fit, truncated to [0, upper)."""
    sr = sigma_range or (SIGMA_RANGE_ECC if data.upper <= 1.0 else SIGMA_RANGE_PSI)
    params, diag = _fit(data, "rayleigh", seed, n_walkers, n_steps, n_burn, sigma_range=sr)
    return {"sigma": interval(params[:, 0]),
            "hyperprior": f"log-uniform on sigma in [{sr[0]:g}, {sr[1]:g}]",
            "diagnostics": diag}


def _ecc_fit(kind, samples, log_p0, seed, n_steps, n_burn, max_samples=MAX_FIT_SAMPLES):
    """One eccentricity fit from the samples (a top-level function, so a worker process can run it)."""
    data = HMBData(samples, log_p0, upper=1.0, max_samples=max_samples)
    if kind == "beta":
        return fit_beta(data, seed=seed, n_steps=n_steps, n_burn=n_burn)
    return fit_rayleigh(data, seed=seed + 1, n_steps=n_steps, n_burn=n_burn)


def eccentricity_population(samples, log_p0, seed=0, interim_prior="", n_steps=1000, n_burn=300,
                            min_objects=5, submit=None, max_samples=MAX_FIT_SAMPLES):
    """Beta and Rayleigh eccentricity populations from per-planet samples.

    Parameters
    ----------
    samples : list of 1-D arrays
        Posterior eccentricity samples of each planet with a measured
        eccentricity, drawn under the interim prior.
    log_p0 : list of 1-D arrays
        Interim log prior density at each sample.
    interim_prior : str
        Description of the interim prior, recorded in the result.
    submit : callable, optional
        ``submit(fn, *args) -> future``: runs the Beta and Rayleigh fits side by
        side (e.g. in two processes); each fit is seeded as in a serial run.
    max_samples : int or None
        At most this many samples (planets x samples per planet) per fit
        (:data:`MAX_FIT_SAMPLES`; None: all); a thinned fit says so under
        ``"thinning"``.

    Returns
    -------
    dict
        ``{"beta": {...}, "rayleigh": {...}, "n_planets", "interim_prior",
        "method"}``; ``beta``/``rayleigh`` are None (with ``"reason"``) when
        fewer than ``min_objects`` planets are available.
    """
    return start_eccentricity_population(samples, log_p0, seed, interim_prior, n_steps, n_burn, min_objects,
                                         submit, max_samples)()


def start_eccentricity_population(samples, log_p0, seed=0, interim_prior="", n_steps=1000, n_burn=300,
                                  min_objects=5, submit=None, max_samples=MAX_FIT_SAMPLES):
    """Start the fits of :func:`eccentricity_population`; returns a function that waits and assembles them."""
    out = {"n_planets": len(samples), "interim_prior": interim_prior,
           "method": "Hogg, Myers & Bovy 2010 importance-sampling likelihood, sampled with emcee"}
    if len(samples) < min_objects:
        out.update(beta=None, rayleigh=None,
                   reason=f"only {len(samples)} planets with a measured eccentricity (need {min_objects})")
        return lambda: out
    thin = thinning_note(len(samples), min(len(s) for s in samples), max_samples)
    if thin:
        out["thinning"] = thin
    if submit is None:
        data = HMBData(samples, log_p0, upper=1.0, max_samples=max_samples)
        out["beta"] = fit_beta(data, seed=seed, n_steps=n_steps, n_burn=n_burn)
        out["rayleigh"] = fit_rayleigh(data, seed=seed + 1, n_steps=n_steps, n_burn=n_burn)
        parts = None
    else:
        parts = [submit(_ecc_fit, kind, samples, log_p0, seed, n_steps, n_burn, max_samples)
                 for kind in ("beta", "rayleigh")]

    def finish():
        if parts is not None:
            out["beta"], out["rayleigh"] = (f.result() for f in parts)
        out["ess_min"] = min(out["beta"]["diagnostics"]["ess_min"], out["rayleigh"]["diagnostics"]["ess_min"])
        _flag_ess(out)
        return out
    return finish


def _flag_ess(out):
    """Say so when the importance sampling leans on very few samples of some object."""
    if out.get("ess_min") is not None and out["ess_min"] < ESS_WARN:
        out["ess_warning"] = (f"minimum effective sample size {out['ess_min']:.1f} < {ESS_WARN:g}: for some "
                              f"objects the population model puts its weight where their posterior has few "
                              f"samples; treat the intervals as rough")


def tilt_population(samples, log_p0, seed=0, interim_prior="", n_steps=1000, n_burn=300,
                    min_objects=5, max_samples=MAX_FIT_SAMPLES):
    """Rayleigh(sigma) dispersion of planet tilts psi [rad] about their system planes.

    Same estimator as :func:`eccentricity_population`; sigma is reported in
    degrees as well as radians.
    """
    out = {"n_planets": len(samples), "interim_prior": interim_prior,
           "method": "Hogg, Myers & Bovy 2010 importance-sampling likelihood, sampled with emcee"}
    if len(samples) < min_objects:
        out.update(rayleigh=None, reason=f"only {len(samples)} planets with tilt samples (need {min_objects})")
        return out
    thin = thinning_note(len(samples), min(len(s) for s in samples), max_samples)
    if thin:
        out["thinning"] = thin
    data = HMBData(samples, log_p0, upper=math.pi, max_samples=max_samples)
    fit = fit_rayleigh(data, seed=seed, n_steps=n_steps, n_burn=n_burn, sigma_range=SIGMA_RANGE_PSI)
    fit["sigma_deg"] = {k: math.degrees(v) for k, v in fit["sigma"].items()}
    out["rayleigh"] = fit
    out["ess_min"] = fit["diagnostics"]["ess_min"]
    _flag_ess(out)
    return out


def marginal_tilt_log_prior(psi, sigma_prior, n_grid=400):
    """log p0(psi) when psi ~ Rayleigh(sigma) and sigma [deg] ~ ``sigma_prior`` (an archsys Prior).

    The interim prior of tilts sampled hierarchically per system is the
    Rayleigh marginalised over the sigma prior, integrated on a log grid.
    """
    lo, hi = max(sigma_prior._bounds[0], 1e-3), sigma_prior._bounds[1]
    s_deg = np.geomspace(lo, hi, n_grid)                           # (G,)
    w = np.exp(sigma_prior.logpdf(s_deg)) * s_deg                  # density per d ln sigma
    w = w / np.trapezoid(w, np.log(s_deg))
    s = np.radians(s_deg)[:, None]                                 # (G, 1)
    x = np.asarray(psi, dtype=float).ravel()[None, :]              # (1, M)
    f = x / s ** 2 * np.exp(-x ** 2 / (2 * s ** 2))
    p = np.trapezoid(w[:, None] * f, np.log(s_deg), axis=0)
    return np.log(np.maximum(p, 1e-300)).reshape(np.shape(psi))
