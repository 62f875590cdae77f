"""Estimators of the link's impairments from aligned edges, each with a 95 % interval.

Pure functions over arrays; each returns an ``Estimate`` (value, interval, method, what
it rests on) or a ``Blind`` (why the capture cannot tell). Interval methods:
  * t-interval (Student) for means: mark bias, glitch width, per-frame clock figures;
  * chi-square interval for a Gaussian sigma (jitter without quantisation);
  * a normal interval on the variance with the sample's own kurtosis
    (Var(s^2) = k4 / n + 2 k2^2 / (n - 1), the k-statistics variance) otherwise;
  * exact chi-square interval for an exponential mean (idle-noise pulse width);
  * Garwood (exact Poisson) interval for counts per time (glitch and noise rates);
  * a seeded bootstrap (``numpy.random.Generator``) for the jitter shape's kurtosis and
    the quiet time.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..channel.linkfile import Estimate
from ..intervals import poisson_ci

#: confidence of every interval
CONFIDENCE = 0.95
#: excess kurtosis of the two jitter shapes the channel model offers (textbook values:
#: normal 0, continuous uniform -6/5)
EXCESS_KURTOSIS = {"gauss": 0.0, "uniform": -1.2}
#: bootstrap resamples (the generator is seeded by the caller)
BOOTSTRAP = 400


@dataclass(frozen=True)
class Blind:
    """What a capture cannot tell about one impairment, and why."""

    name: str
    reason: str


def _t(df: int) -> float:
    from scipy.stats import t

    return float(t.ppf(0.5 + CONFIDENCE / 2, df))


def _z() -> float:
    from scipy.stats import norm

    return float(norm.ppf(0.5 + CONFIDENCE / 2))


def mean_t(name: str, x: np.ndarray, basis: str, unit: str, note: str = "") -> Estimate | Blind:
    """Return the mean of ``x`` with its Student t-interval (at least 2 values)."""
    x = np.asarray(x, float)
    if x.size < 2:
        return Blind(name, f"{x.size} {basis}: too few for an interval")
    m = float(x.mean())
    h = _t(x.size - 1) * float(x.std(ddof=1)) / math.sqrt(x.size)
    return Estimate(name, m, (m - h, m + h), "t-interval", int(x.size), basis, unit, note)


# --- jitter ---------------------------------------------------------------------------------


@dataclass(frozen=True)
class JitterFit:
    """Jitter figures: sigma (µs) with its interval, the shape, the channel value
    (sigma for gauss, half-width sqrt(3) sigma for uniform)."""

    sigma: Estimate | Blind
    shape: Estimate | Blind
    value: Estimate | Blind


def jitter(residual_us: np.ndarray, dof: int, quant_step_us: float,
           rng: np.random.Generator) -> JitterFit:
    """Return the edge jitter from the fit residuals (``dof`` degrees of freedom) once a
    quantisation step's share (uniform error of variance step^2 / 12, fourth cumulant
    -step^4 / 120) is taken out."""
    from scipy.stats import chi2, kstat

    r = np.asarray(residual_us, float)
    n = r.size
    if dof < 30 or n < 30:
        why = f"{n} edge residuals ({dof} degrees of freedom): too few (need 30)"
        return JitterFit(Blind("jitter_sigma_us", why), Blind("jitter_kind", why),
                         Blind("jitter_us", why))
    k2 = float(np.sum(r * r) / dof)
    q2 = quant_step_us ** 2 / 12.0
    q4 = -(quant_step_us ** 4) / 120.0
    k4 = float(kstat(r, 4))
    var_j = k2 - q2
    shape, excess = _shape(r, dof, q2, q4, rng)
    gaussian_residuals = quant_step_us == 0 and shape.value == "gauss"
    if gaussian_residuals:
        lo2, hi2 = (dof * k2 / float(chi2.ppf(p, dof))
                    for p in (0.5 + CONFIDENCE / 2, 0.5 - CONFIDENCE / 2))
        method = "chi-square interval (Gaussian residuals)"
    else:
        h = _z() * math.sqrt(max(k4, -2 * k2 * k2) / n + 2 * k2 * k2 / (n - 1))
        lo2, hi2 = k2 - h, k2 + h
        method = "normal interval on the variance with the sample kurtosis"
    lo_j, hi_j = lo2 - q2, hi2 - q2
    if quant_step_us:
        method += f"; quantisation variance {q2:.4g} µs² taken out"
    note = ""
    if var_j <= 0:
        note = "edge scatter no larger than the quantisation alone: jitter below resolution"
    sig = Estimate("jitter_sigma_us", math.sqrt(max(var_j, 0.0)),
                   (math.sqrt(max(lo_j, 0.0)), math.sqrt(max(hi_j, 0.0))), method, n,
                   "edges", "us", note)
    k = 1.0 if shape.value == "gauss" else math.sqrt(3.0)
    lo, hi = sig.ci95  # type: ignore[misc]
    what = "sigma" if shape.value == "gauss" else "half-width sqrt(3) * sigma"
    val = Estimate("jitter_us", k * float(sig.value), (k * lo, k * hi), method, n, "edges",
                   "us", f"{what} ({shape.value} shape)" + (f"; {note}" if note else ""))
    return JitterFit(sig, shape, val)


def _shape(r: np.ndarray, dof: int, q2: float, q4: float, rng: np.random.Generator
           ) -> tuple[Estimate, float]:
    """Return the jitter shape (gauss or uniform, whichever excess kurtosis is nearer) from
    the residuals' cumulants less the quantisation's, with a bootstrap interval."""
    from scipy.stats import kstat, kstest

    per_dof = r.size / dof  # residuals of a fit: sum of squares over dof, not over n

    def excess(x: np.ndarray) -> float:
        k2 = float(np.mean(x * x)) * per_dof - q2
        return (float(kstat(x, 4)) - q4) / k2 ** 2 if k2 > 0 else float("nan")

    e = excess(r)
    boots = np.array([excess(r[rng.integers(0, r.size, r.size)]) for _ in range(BOOTSTRAP)])
    boots = boots[np.isfinite(boots)]
    lo, hi = (np.quantile(boots, [0.5 - CONFIDENCE / 2, 0.5 + CONFIDENCE / 2])
              if boots.size else (float("nan"), float("nan")))
    kind = "gauss" if not math.isfinite(e) or e > -0.6 else "uniform"
    tests: list[tuple[str, float]] = [("excess_kurtosis", e), ("excess_kurtosis_lo", float(lo)),
                                      ("excess_kurtosis_hi", float(hi))]
    if q2 == 0:
        s = float(r.std())
        tests.append(("ks_p_gauss", float(kstest(r, "norm", args=(0.0, s)).pvalue)))
        a = math.sqrt(3.0) * s
        tests.append(("ks_p_uniform", float(kstest(r, "uniform", args=(-a, 2 * a)).pvalue)))
    note = ""
    if math.isfinite(lo) and lo <= EXCESS_KURTOSIS["uniform"] and hi >= EXCESS_KURTOSIS["gauss"]:
        note = "the interval holds both shapes: the capture cannot tell them apart"
    return Estimate("jitter_kind", kind, None,
                    "excess kurtosis of the edge residuals (k-statistics, quantisation's "
                    f"cumulants removed; {BOOTSTRAP} seeded bootstrap resamples): gauss 0, "
                    "uniform -1.2, nearer wins", int(r.size), "edges", "", note,
                    tuple(tests)), e


# --- quantisation ---------------------------------------------------------------------------

#: candidate steps per factor of 10 in the lattice search
_STEPS_PER_DECADE = 600
#: smallest quantisation step the channel model takes (ChannelSpec)
_MIN_STEP_US = 0.01


def capture_resolution_us(durations_us: np.ndarray) -> float:
    """Return the largest 1-2-5 step (10 µs down to 1 ps) every duration is a whole
    multiple of (0 when none is): the capture's time resolution is this or finer."""
    d = np.asarray(durations_us, float)
    for exp in range(1, -7, -1):
        for mant in (5.0, 2.0, 1.0):
            r = mant * 10.0 ** exp
            k = np.round(d / r)
            if np.all(np.abs(d - k * r) <= 1e-9 * np.maximum(d, 1.0)):
                return r
    return 0.0


def quantisation(diffs_us: np.ndarray, resolution_us: float, scatter_us: float
                 ) -> Estimate | Blind:
    """Return the output quantisation step from ``diffs_us``: differences between captured
    durations of pulses that should be equal (same frame, level and ideal length), which
    are whole multiples of the step when there is one.

    Search: for candidate steps s the phase concentration C(s) = mean(cos(2 pi x / s))
    (circular mean of x / s, anchored at 0 because differences of lattice points are
    multiples of s); every divisor of the step scores as high, so the largest step with
    C >= max(0.5, 6 / sqrt(2 n)) wins. Steps above sqrt(12) * 1.1 * ``scatter_us`` are not
    searched (a step that large would scatter edges more than measured), nor steps below
    1.5 * ``resolution_us``. Then a least-squares fit s = sum(x m) / sum(m^2), m = round(x / s),
    with a t-interval.
    """
    name = "quant_step_us"
    x = np.asarray(diffs_us, float)
    x = x[np.abs(x) > 1e-9 * max(1.0, float(np.abs(x).max(initial=0.0)))]
    lo = max(_MIN_STEP_US, 1.5 * resolution_us)
    hi = math.sqrt(12.0) * 1.1 * scatter_us
    res = f"the capture's resolution ({resolution_us:g} µs)" if resolution_us else \
        "the model's smallest step (0.01 µs)"
    if x.size < 50:
        return Blind(name, f"only {x.size} nonzero differences between pulses that should be "
                     "equal (need 50): edges too clean or too few frames to show a lattice")
    if hi <= lo:
        return Blind(name, f"edge scatter ({scatter_us:.3g} µs) too small to show a step "
                     f"above {res}")
    x = x[:20000]
    grid = np.geomspace(lo, hi, max(8, int(_STEPS_PER_DECADE * math.log10(hi / lo)) + 1))
    conc = np.empty(grid.size)
    for i in range(0, grid.size, 256):
        conc[i:i + 256] = np.cos(2 * np.pi * x[:, None] / grid[None, i:i + 256]).mean(axis=0)
    threshold = max(0.5, 6.0 / math.sqrt(2.0 * x.size))
    hits = np.flatnonzero(conc >= threshold)
    if hits.size == 0:
        return Blind(name, f"no lattice in {x.size} duration differences between {lo:.3g} and "
                     f"{hi:.3g} µs (best concentration {conc.max():.2f} < {threshold:.2f}); "
                     f"a step below {res} cannot be told")
    best = hits[-1]
    while best > 0 and conc[best - 1] > conc[best]:  # climb to the local peak
        best -= 1
    s0 = float(grid[best])
    m = np.round(x / s0)
    keep = m != 0
    x, m = x[keep], m[keep]
    s = float(np.sum(x * m) / np.sum(m * m))
    e = x - m * s
    se = math.sqrt(float(np.sum(e * e)) / (x.size - 1) / float(np.sum(m * m)))
    h = _t(x.size - 1) * se + 1e-9 * s  # plus the float rounding of the time stamps
    return Estimate(name, s, (s - h, s + h),
                    "lattice search on duration differences (phase concentration "
                    f"{conc[best]:.3f}), then least-squares step with t-interval",
                    int(x.size), "duration differences", "us",
                    f"capture resolution {resolution_us:g} µs" if resolution_us else "",
                    (("concentration", float(conc[best])),))


# --- rates and widths -----------------------------------------------------------------------


def rate_per_ms(name: str, count: int, time_us: float, basis: str) -> Estimate | Blind:
    """Return ``count`` events in ``time_us`` as a rate per ms with the Garwood interval."""
    if time_us <= 0:
        return Blind(name, f"no {basis} time observed")
    lo, hi = poisson_ci(int(count), CONFIDENCE)
    ms = time_us / 1000.0
    return Estimate(name, count / ms, (lo / ms, hi / ms), "Garwood (exact Poisson) interval",
                    int(count), basis, "per ms", f"{count} in {ms:.6g} ms")


def exponential_mean(name: str, widths_us: np.ndarray, basis: str, floor_us: float = 0.0
                     ) -> Estimate | Blind:
    """Return the mean of exponential widths from the part above ``floor_us`` (memoryless:
    ``w - floor`` for ``w > floor`` is exponential with the same mean, so jitter and
    quantisation, which distort the narrow pulses, stay out), with the exact chi-square
    interval (2 n mean / mu ~ chi-square, 2 n degrees of freedom) and a KS test p-value."""
    from scipy.stats import chi2, kstest

    w = np.asarray(widths_us, float)
    w = w[w > floor_us] - floor_us
    if w.size < 2:
        return Blind(name, f"{w.size} {basis} wider than {floor_us:.3g} µs: too few")
    s = float(w.sum())
    n = w.size
    lo = 2 * s / float(chi2.ppf(0.5 + CONFIDENCE / 2, 2 * n))
    hi = 2 * s / float(chi2.ppf(0.5 - CONFIDENCE / 2, 2 * n))
    p = float(kstest(w, "expon", args=(0.0, s / n)).pvalue)
    method = "exact chi-square interval of an exponential mean"
    if floor_us:
        method += f", from the widths above {floor_us:.3g} µs less that floor"
    return Estimate(name, s / n, (lo, hi), method, n, basis, "us",
                    tests=(("ks_p_exponential", p),))


def quiet_time(first_space_us: np.ndarray, noise_mean_us: float, rng: np.random.Generator
               ) -> Estimate | Blind:
    """Return the idle receiver's quiet time: the first space after a frame lasts the
    quiet time plus an exponential wait (mean ``noise_mean_us``), so quiet = median -
    mean * ln 2 (the median resists a glitch in the quiet part); seeded bootstrap interval."""
    name = "idle_quiet_us"
    x = np.asarray(first_space_us, float)
    if x.size < 3:
        return Blind(name, f"{x.size} idle stretches after a frame with noise in them (need 3)")
    shift = noise_mean_us * math.log(2.0)
    q = float(np.median(x)) - shift
    boots = np.median(x[rng.integers(0, x.size, (BOOTSTRAP, x.size))], axis=1) - shift
    lo, hi = np.quantile(boots, [0.5 - CONFIDENCE / 2, 0.5 + CONFIDENCE / 2])
    return Estimate(name, max(q, 0.0), (max(float(lo), 0.0), max(float(hi), 0.0)),
                    f"median first space less mean noise width * ln 2; {BOOTSTRAP} seeded "
                    "bootstrap resamples", int(x.size), "idle stretches after a frame", "us")


# --- clock ----------------------------------------------------------------------------------


def clock_from_bursts(b_mid: np.ndarray, v_s: np.ndarray, n_bursts: int
                      ) -> tuple[Estimate, Estimate]:
    """Return (clock error %, drift %/s) from the clock scale at mid-frame ``b_mid`` of
    frames ``v_s`` seconds (ideal time) after their transmission started: least-squares
    line b = k (1 + d v), intercept k, slope k d; t-intervals with n - 2 degrees of freedom."""
    x = np.stack((np.ones_like(v_s), v_s), axis=1)
    coef, *_ = np.linalg.lstsq(x, b_mid, rcond=None)
    e = b_mid - x @ coef
    dof = b_mid.size - 2
    cov = float(np.sum(e * e)) / dof * np.linalg.inv(x.T @ x)
    t = _t(dof)
    k, kd = float(coef[0]), float(coef[1])
    hk, hd = t * math.sqrt(cov[0, 0]), t * math.sqrt(cov[1, 1])
    basis = f"frames in {n_bursts} whole transmissions"
    method = "least-squares line through the frames' clock scales against time since the " \
        "transmission started, t-interval"
    return (Estimate("clock_error_pct", 100 * (k - 1), (100 * (k - hk - 1), 100 * (k + hk - 1)),
                     method + " (intercept)", int(b_mid.size), basis, "%"),
            Estimate("drift_pct_per_s", 100 * kd / k, (100 * (kd - hd) / k, 100 * (kd + hd) / k),
                     method + " (slope)", int(b_mid.size), basis, "% per s"))


def clock_from_starts(start_us: np.ndarray, nominal_us: np.ndarray, burst: np.ndarray
                      ) -> tuple[Estimate, Estimate] | None:
    """Return (clock error %, drift %/s) from the captured times ``start_us`` of one
    point of each frame of whole transmissions, ``nominal_us`` (µs, ideal) after their
    transmission ``burst`` (labels) began: least squares ``start = c_burst + k N + q N^2``
    (one intercept per transmission; the drift d = 2 q / k is the clock's change per µs
    of the pulse-level model's ``(1 + e)(1 + d u)``), t-intervals with n - bursts - 2
    degrees of freedom. Receiver delays that repeat from frame to frame (slicer settling
    over the preamble, fixed patterns such as the sync word) cancel here, where they
    would bend each frame's own fit. None when the terms cannot be told apart (fewer than
    3 frames per transmission, or too few degrees of freedom)."""
    _, b = np.unique(burst, return_inverse=True)
    n_b = int(b.max()) + 1 if b.size else 0
    dof = start_us.size - n_b - 2
    if n_b < 2 or dof < 3:
        return None
    x = np.stack((nominal_us / 1e6, (nominal_us / 1e6) ** 2, start_us), axis=1)
    counts = np.bincount(b, minlength=n_b)
    means = np.stack([np.bincount(b, x[:, j], n_b) for j in range(3)], axis=1) / counts[:, None]
    x = x - means[b]  # within each transmission: the intercepts drop out
    a, y = x[:, :2], x[:, 2]
    ata = a.T @ a
    if np.linalg.cond(ata) > 1e12:
        return None
    coef = np.linalg.solve(ata, a.T @ y)
    e = y - a @ coef
    cov = float(np.sum(e * e)) / dof * np.linalg.inv(ata)
    t = _t(dof)
    k, q = float(coef[0]) / 1e6, float(coef[1]) / 1e12  # start in µs per µs and per µs^2
    hk, hq = t * math.sqrt(cov[0, 0]) / 1e6, t * math.sqrt(cov[1, 1]) / 1e12
    scale = 100.0 * 2.0 * 1e6 / k  # q -> % per s
    basis = f"frames in {n_b} whole transmissions"
    method = ("least-squares fit of the frames' start times against their nominal time "
              "since the transmission started (one intercept per transmission), t-interval")
    return (Estimate("clock_error_pct", 100 * (k - 1), (100 * (k - hk - 1), 100 * (k + hk - 1)),
                     method + " (linear term)", int(start_us.size), basis, "%"),
            Estimate("drift_pct_per_s", scale * q, (scale * (q - hq), scale * (q + hq)),
                     method + " (quadratic term)", int(start_us.size), basis, "% per s"))


def per_frame(name: str, x: np.ndarray, se: np.ndarray, unit: str, what: str
              ) -> Estimate | Blind:
    """Return the mean of per-frame figures ``x``: a t-interval over frames when there
    are 3 or more, else the fit's own standard error ``se`` (normal interval)."""
    x = np.asarray(x, float)
    if x.size >= 3:
        est = mean_t(name, x, "frames", unit, what)
        return est
    if x.size == 0:
        return Blind(name, "no fitted frame")
    m = float(x.mean())
    h = _z() * float(np.sqrt(np.sum(np.asarray(se) ** 2))) / x.size
    return Estimate(name, m, (m - h, m + h), "least-squares standard error of "
                    f"{x.size} frame(s), normal interval (too few frames for a t-interval "
                    "over frames)", int(x.size), "frames", unit, what)
