"""Statistics of sections: summaries (ASTM E562), outliers (Grubbs), between-batch tests
(Welch's t-test, one-way ANOVA, Welch's ANOVA, Holm), the spread test against window studies
and the chi-square criterion of Gitman, Askes & Sluys.

Plain functions over arrays of section values, returning small frozen records; the
comparison of whole batches (`polisect.apps.compare`) is built on them.

Examples
--------
>>> s = summarize([10.0, 12.0, 11.0, 13.0])
>>> round(s.mean, 2), round(s.ci95, 3)
(11.5, 2.054)
>>> t = welch_t([1.0, 2.0, 3.0, 4.0], [3.0, 4.0, 5.0, 6.0, 7.0])
>>> round(t.p_value, 4)
0.0349

References
----------
.. [1] ASTM E562, Standard Test Method for Determining Volume Fraction by Systematic Manual
   Point Count.
.. [2] Grubbs, F. E. (1969). Procedures for detecting outlying observations in samples.
   Technometrics 11, 1-21.
.. [3] Welch, B. L. (1947). The generalization of "Student's" problem when several
   different population variances are involved. Biometrika 34, 28-35.
.. [4] Welch, B. L. (1951). On the comparison of several mean values: an alternative
   approach. Biometrika 38, 330-336.
.. [5] Holm, S. (1979). A simple sequentially rejective multiple test procedure.
   Scandinavian Journal of Statistics 6, 65-70.
.. [6] Gitman, I. M., Askes, H., Sluys, L. J. (2007). Representative volume: existence and
   size determination. Eng. Fract. Mech. 74, 2518-2534.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import stats

from ..core.errors import InputError

ALPHA = 0.05


@dataclass(frozen=True)
class Summary:
    """Summary statistics of one quantity over the sections of one batch.

    Attributes
    ----------
    n : int
        Number of sections with a value.
    mean, sd, se : float
        Mean, standard deviation (n − 1 in the denominator) and standard error sd/√n.
    ci95 : float
        Half-width of the 95 % interval of the mean, t·sd/√n with Student's t for n − 1
        degrees of freedom (NaN for n < 2).
    relative_accuracy_pct : float
        ci95 / |mean| · 100, the %RA of ASTM E562 (NaN when undefined).
    """

    n: int
    mean: float
    sd: float
    se: float
    ci95: float
    relative_accuracy_pct: float

    def to_dict(self) -> dict:
        return {k: json_number(v) for k, v in self.__dict__.items()}


def summarize(values, confidence: float = 0.95) -> Summary:
    """n, mean, sd, se, Student-t interval and %RA of a sample (ASTM E562).

    Parameters
    ----------
    values : array_like of float
        One value per section.
    confidence : float
        Two-sided confidence level of the interval.

    Returns
    -------
    Summary

    References
    ----------
    ASTM E562, Standard Test Method for Determining Volume Fraction by Systematic Manual
    Point Count (95 % CI = t·s/√n, %RA = CI/mean·100).

    Examples
    --------
    >>> summarize([1.0, 2.0, 3.0]).sd
    1.0
    """
    x = _values(values)
    n = x.size
    if n == 0:
        raise InputError("no values to summarize: every section lacks this quantity")
    mean = float(x.mean())
    if n < 2:
        return Summary(1, mean, math.nan, math.nan, math.nan, math.nan)
    sd = float(x.std(ddof=1))
    se = sd / math.sqrt(n)
    ci = float(stats.t.ppf(0.5 + confidence / 2.0, n - 1)) * se
    ra = ci / abs(mean) * 100.0 if mean != 0 else math.nan
    return Summary(n, mean, sd, se, ci, ra)


@dataclass(frozen=True)
class Grubbs:
    """Grubbs' two-sided test for one outlier.

    Attributes
    ----------
    n : int
        Sample size.
    statistic : float
        G = max |xᵢ − x̄| / s.
    critical : float
        Critical G at significance *alpha* (two-sided).
    alpha : float
        Significance level.
    index : int
        Position of the most extreme value in the sample.
    value : float
        The most extreme value.
    outlier : bool
        G > critical: the value does not belong to the sample at this level.
    """

    n: int
    statistic: float
    critical: float
    alpha: float
    index: int
    value: float
    outlier: bool

    def to_dict(self) -> dict:
        return {k: json_number(v) for k, v in self.__dict__.items()}


def grubbs_critical(n: int, alpha: float = ALPHA) -> float:
    """Critical value of Grubbs' two-sided statistic for *n* values.

    G_crit = (n − 1)/√n · √(t² / (n − 2 + t²)), with t the upper α/(2n) quantile of
    Student's t for n − 2 degrees of freedom.

    Parameters
    ----------
    n : int
        Sample size, at least 3.
    alpha : float
        Two-sided significance level.

    Returns
    -------
    float

    References
    ----------
    Grubbs, F. E. (1969). Procedures for detecting outlying observations in samples.
    Technometrics 11, 1-21. ASTM E178, Standard Practice for Dealing With Outlying
    Observations.

    Examples
    --------
    >>> round(grubbs_critical(10), 3)
    2.29
    """
    if n < 3:
        raise InputError(f"Grubbs' test needs at least 3 values, got {n}")
    t = float(stats.t.isf(alpha / (2.0 * n), n - 2))
    return (n - 1) / math.sqrt(n) * math.sqrt(t * t / (n - 2 + t * t))


def grubbs(values, alpha: float = ALPHA) -> Grubbs:
    """Grubbs' two-sided test: is the most extreme value an outlier of a normal sample?

    One value is tested (the one farthest from the mean); Grubbs (1969) and ASTM E178
    repeat the test on the rest only after removing a detected outlier, which this
    function leaves to the caller.

    Parameters
    ----------
    values : array_like of float
        The sample, at least 3 values.
    alpha : float
        Two-sided significance level (default 0.05).

    Returns
    -------
    Grubbs

    References
    ----------
    Grubbs, F. E. (1969). Procedures for detecting outlying observations in samples.
    Technometrics 11, 1-21.

    Examples
    --------
    >>> grubbs([10.0, 10.2, 9.9, 10.1, 10.0, 13.0]).outlier
    True
    """
    x = _values(values)
    n = x.size
    crit = grubbs_critical(n, alpha)
    sd = float(x.std(ddof=1))
    dev = np.abs(x - x.mean())
    i = int(np.argmax(dev))
    g = float(dev[i] / sd) if sd > 0 else 0.0
    return Grubbs(n, g, crit, alpha, i, float(x[i]), g > crit)


@dataclass(frozen=True)
class Significance:
    """A significance test: its name, statistic, degrees of freedom and p-value."""

    name: str
    statistic: float
    df: tuple[float, ...]
    p_value: float

    def to_dict(self) -> dict:
        return {"name": self.name, "statistic": json_number(self.statistic),
                "df": [json_number(v) for v in self.df], "p_value": json_number(self.p_value)}


def welch_t(a, b) -> Significance:
    """Welch's two-sample t-test (unequal variances), two-sided.

    t = (x̄_a − x̄_b) / √(s_a²/n_a + s_b²/n_b), with the Welch–Satterthwaite degrees of
    freedom.

    Parameters
    ----------
    a, b : array_like of float
        The two samples, at least 2 values each.

    Returns
    -------
    Significance

    References
    ----------
    Welch, B. L. (1947). The generalization of "Student's" problem when several different
    population variances are involved. Biometrika 34, 28-35.

    Examples
    --------
    >>> round(welch_t([1.0, 2.0, 3.0], [2.0, 4.0, 6.0]).statistic, 4)
    -1.5492
    """
    x, y = _values(a), _values(b)
    _need(x, y)
    va, vb = x.var(ddof=1) / x.size, y.var(ddof=1) / y.size
    se2 = va + vb
    if se2 == 0:
        return Significance("Welch t-test", math.nan, (math.nan,), math.nan)
    t = float((x.mean() - y.mean()) / math.sqrt(se2))
    df = float(se2 ** 2 / (va ** 2 / (x.size - 1) + vb ** 2 / (y.size - 1)))
    return Significance("Welch t-test", t, (df,), float(2.0 * stats.t.sf(abs(t), df)))


def one_way_anova(groups) -> Significance:
    """Classical one-way analysis of variance (equal variances assumed).

    Parameters
    ----------
    groups : sequence of array_like
        One sample per batch, at least 2 groups.

    Returns
    -------
    Significance
        F = between-group mean square / within-group mean square, df = (k − 1, N − k).

    References
    ----------
    Fisher, R. A. (1925). Statistical Methods for Research Workers. Oliver and Boyd.

    Examples
    --------
    >>> round(one_way_anova([[1.0, 2.0, 3.0], [3.0, 4.0, 5.0]]).statistic, 3)
    6.0
    """
    xs = [_values(g) for g in groups]
    _need(*xs)
    k, n_total = len(xs), sum(x.size for x in xs)
    grand = np.concatenate(xs).mean()
    between = sum(x.size * (x.mean() - grand) ** 2 for x in xs) / (k - 1)
    within = sum(((x - x.mean()) ** 2).sum() for x in xs) / (n_total - k)
    if within == 0:
        return Significance("one-way ANOVA", math.nan, (k - 1.0, n_total - k), math.nan)
    f = float(between / within)
    return Significance("one-way ANOVA", f, (k - 1.0, float(n_total - k)),
                float(stats.f.sf(f, k - 1, n_total - k)))


def welch_anova(groups) -> Significance:
    """Welch's heteroscedastic one-way ANOVA.

    With wᵢ = nᵢ/sᵢ², W = Σwᵢ, x̃ = Σwᵢx̄ᵢ/W and Λ = Σ(1 − wᵢ/W)²/(nᵢ − 1):
    F = [Σwᵢ(x̄ᵢ − x̃)²/(k − 1)] / [1 + 2(k − 2)Λ/(k² − 1)], df = (k − 1, (k² − 1)/(3Λ)).
    For two groups it is Welch's t-test (F = t²).

    Parameters
    ----------
    groups : sequence of array_like
        One sample per batch, at least 2 values each and a non-zero spread in every group.

    Returns
    -------
    Significance

    References
    ----------
    Welch, B. L. (1951). On the comparison of several mean values: an alternative approach.
    Biometrika 38, 330-336.

    Examples
    --------
    >>> r = welch_anova([[1.0, 2.0, 3.0], [2.0, 4.0, 6.0]])
    >>> round(r.statistic, 4)  # = welch_t(...).statistic ** 2
    2.4
    """
    xs = [_values(g) for g in groups]
    _need(*xs)
    k = len(xs)
    n = np.array([x.size for x in xs], dtype=float)
    var = np.array([x.var(ddof=1) for x in xs])
    if np.any(var == 0):
        return Significance("Welch's ANOVA", math.nan, (k - 1.0, math.nan), math.nan)
    w = n / var
    big_w = w.sum()
    means = np.array([x.mean() for x in xs])
    centre = (w * means).sum() / big_w
    lam = float(((1.0 - w / big_w) ** 2 / (n - 1.0)).sum())
    f = float((w * (means - centre) ** 2).sum() / (k - 1)
              / (1.0 + 2.0 * (k - 2) * lam / (k * k - 1)))
    df2 = (k * k - 1) / (3.0 * lam)
    return Significance("Welch's ANOVA", f, (k - 1.0, df2), float(stats.f.sf(f, k - 1, df2)))


@dataclass(frozen=True)
class Difference:
    """Batch *other* against batch *reference* on one quantity, in percent of the reference.

    Attributes
    ----------
    relative_pct : float
        100 · (mean_other − mean_ref) / |mean_ref|.
    ci95_pct : float
        Half-width of the 95 % Welch interval of the difference, in percent of |mean_ref|
        (the uncertainty of the reference mean as a divisor is neglected).
    test : Significance
        Welch's t-test.
    p_adjusted : float
        p-value after Holm's step-down correction over the pairs compared (equal to the
        Welch p-value for two batches).
    sentence : str
        The difference in plain words.
    """

    reference: str
    other: str
    quantity: str
    relative_pct: float
    ci95_pct: float
    test: Significance
    p_adjusted: float
    sentence: str

    def to_dict(self) -> dict:
        return {"reference": self.reference, "other": self.other, "quantity": self.quantity,
                "relative_pct": json_number(self.relative_pct),
                "ci95_pct": json_number(self.ci95_pct),
                "test": self.test.to_dict(), "p_adjusted": json_number(self.p_adjusted),
                "sentence": self.sentence}


def difference(label: str, reference: str, a, other: str, b, *, p_adjusted=None
               ) -> Difference:
    """How much batch *other* differs from batch *reference* on a quantity, with a sentence.

    Parameters
    ----------
    label : str
        Quantity in words, e.g. ``"conductivity"``.
    reference, other : str
        Batch names.
    a, b : array_like of float
        Section values of the reference and the other batch.
    p_adjusted : float, optional
        A multiplicity-adjusted p-value to quote instead of Welch's.

    Returns
    -------
    Difference

    References
    ----------
    Welch, B. L. (1947). Biometrika 34, 28-35.

    Examples
    --------
    >>> d = difference("conductivity", "A", [10.0, 10.4, 9.8, 10.2], "B", [9.1, 9.5, 9.3, 9.6])
    >>> d.sentence
    "batch B's conductivity is 7.2 ± 4.1 % lower than batch A's, p = 0.0056"
    """
    x, y = _values(a), _values(b)
    test = welch_t(x, y)
    ref = float(x.mean())
    p = test.p_value if p_adjusted is None else p_adjusted
    if ref == 0 or not math.isfinite(test.p_value):
        rel = ci = math.nan
        sentence = (f"batch {other}'s {label} cannot be compared with batch {reference}'s "
                    "in percent (zero reference mean or no spread in either batch)")
    else:
        se = math.sqrt(x.var(ddof=1) / x.size + y.var(ddof=1) / y.size)
        rel = (float(y.mean()) - ref) / abs(ref) * 100.0
        ci = float(stats.t.ppf(0.975, test.df[0])) * se / abs(ref) * 100.0
        way = "higher" if rel > 0 else "lower"
        sentence = (f"batch {other}'s {label} is {sig(abs(rel))} ± {sig(ci)} % {way} than "
                    f"batch {reference}'s, {p_text(p)}")
        if p >= ALPHA:
            sentence += " (not significant at the 5 % level)"
    return Difference(reference, other, label, rel, ci, test,
                      test.p_value if p_adjusted is None else p_adjusted, sentence)


@dataclass(frozen=True)
class BatchSpread:
    """Section-to-section spread of a batch against the spread within one section.

    Attributes
    ----------
    n : int
        Sections with a value and a window study.
    between_sd : float
        Standard deviation of the section values.
    within_sd : float
        Standard deviation a whole section should show from sampling alone, √(mean Kᵢ/Aᵢ),
        from each section's window study (Kᵢ = D²·A₃ of its integral-range fit, Aᵢ its area).
    ratio : float
        between_sd / within_sd.
    test : Significance
        χ² = (n − 1)s²/σ_w² on n − 1 degrees of freedom, one-sided (spread larger than
        expected).
    sentence : str
        The verdict in plain words.
    """

    n: int
    between_sd: float
    within_sd: float
    ratio: float
    test: Significance
    sentence: str

    def to_dict(self) -> dict:
        return {"n": self.n, "between_sd": json_number(self.between_sd),
                "within_sd": json_number(self.within_sd), "ratio": json_number(self.ratio),
                "test": self.test.to_dict(), "sentence": self.sentence}


def section_spread(values, within_variances, *, batch: str = "", label: str = "") -> BatchSpread:
    """Is the section-to-section spread larger than sampling within one section predicts?

    Under homogeneity every section value scatters with the variance its own window study
    predicts for its size (Kanit et al. 2003: D²(A) = D²·A₃/A). The observed sample
    variance s² of n sections is then σ_w²·χ²(n − 1)/(n − 1); a small upper-tail p-value
    means the batch varies from section to section more than within a section: it is
    heterogeneous.

    Parameters
    ----------
    values : array_like of float
        One value per section.
    within_variances : array_like of float
        The variance of each section's value expected from its window study, Kᵢ/Aᵢ.
    batch, label : str
        Names for the sentence.

    Returns
    -------
    BatchSpread

    References
    ----------
    Kanit, T., Forest, S., Galliet, I., Mounoury, V., Jeulin, D. (2003). Determination of
    the size of the representative volume element for random composites: statistical and
    numerical approach. Int. J. Solids Struct. 40, 3647-3679.
    """
    x = _values(values)
    w = _values(within_variances)
    if x.size < 2 or w.size != x.size:
        raise InputError("the spread test needs at least 2 sections, each with a window study")
    s2 = float(x.var(ddof=1))
    sw2 = float(w.mean())
    df = x.size - 1
    if sw2 <= 0:
        return BatchSpread(x.size, math.sqrt(s2), 0.0, math.nan,
                      Significance("chi-square spread test", math.nan, (float(df),), math.nan),
                      f"batch {batch}: the window studies predict no spread of {label}")
    chi2 = df * s2 / sw2
    p = float(stats.chi2.sf(chi2, df))
    ratio = math.sqrt(s2 / sw2)
    test = Significance("chi-square spread test", chi2, (float(df),), p)
    if p < ALPHA:
        words = (f"the {label} of batch {batch}'s sections spreads {sig(ratio)}× more than "
                 f"one section's window study predicts ({p_text(p)}): the batch is heterogeneous")
    else:
        words = (f"the {label} of batch {batch}'s sections spreads as much as one section's "
                 f"window study predicts (ratio {sig(ratio)}, {p_text(p)}): no sign of "
                 "heterogeneity beyond sampling")
    return BatchSpread(x.size, math.sqrt(s2), math.sqrt(sw2), ratio, test, words)


@dataclass(frozen=True)
class Gitman:
    """The chi-square adequacy criterion of Gitman, Askes & Sluys (2007) on a sample.

    Values are taken in percent of their mean (so the expected value is 100 and the
    statistic does not depend on the unit); χ² = Σ(xᵢ − 100)²/100 is compared with the
    upper 95 % point of χ²(n − 1). Passing means the values agree within the statistical
    tolerance, roughly a coefficient of variation below 10 %.
    """

    n: int
    chi2: float
    critical: float
    passed: bool

    def to_dict(self) -> dict:
        return {"n": self.n, "chi2": json_number(self.chi2), "critical": json_number(self.critical),
                "passed": self.passed}


def gitman_chi2(values, confidence: float = 0.95) -> Gitman:
    """The chi-square criterion of Gitman, Askes & Sluys (2007) over windows or sections.

    Gitman et al. apply Pearson's statistic χ² = Σ(xᵢ − x̄)²/x̄ to the values of a
    quantity over samples of one size and accept the size as representative when χ² stays
    below the critical value of χ²(n − 1) at 95 %. The statistic depends on the unit of x;
    here x is taken in percent of the mean (a choice of this implementation, stated in the
    output), which makes the criterion a coefficient of variation of about 10 %.

    Parameters
    ----------
    values : array_like of float
        The quantity over windows of one size, or over sections; at least 2.
    confidence : float
        Level of the critical value.

    Returns
    -------
    Gitman

    References
    ----------
    Gitman, I. M., Askes, H., Sluys, L. J. (2007). Representative volume: existence and size
    determination. Engineering Fracture Mechanics 74, 2518-2534.

    Examples
    --------
    >>> gitman_chi2([99.0, 101.0, 100.0, 100.0]).passed
    True
    """
    x = _values(values)
    if x.size < 2:
        raise InputError("the chi-square criterion needs at least 2 values")
    mean = float(x.mean())
    crit = float(stats.chi2.ppf(confidence, x.size - 1))
    if mean == 0:
        return Gitman(x.size, math.nan, crit, False)
    pct = 100.0 * x / abs(mean)
    chi2 = float(((pct - math.copysign(100.0, mean)) ** 2).sum() / 100.0)
    return Gitman(x.size, chi2, crit, chi2 <= crit)


def holm(p_values) -> list[float]:
    """Holm's step-down adjusted p-values (Holm 1979), in the input order."""
    m = len(p_values)
    order = sorted(range(m), key=lambda i: (not math.isfinite(p_values[i]), p_values[i]))
    out = [math.nan] * m
    running = 0.0
    for rank, i in enumerate(order):
        if not math.isfinite(p_values[i]):
            continue
        running = max(running, min(1.0, (m - rank) * p_values[i]))
        out[i] = running
    return out


# --------------------------------------------------------------------------- helpers

def _values(values) -> np.ndarray:
    try:
        x = np.asarray(values, dtype=float).ravel()
    except (TypeError, ValueError):
        raise InputError("values to compare must be numbers") from None
    if not np.all(np.isfinite(x)):
        raise InputError("values to compare must be finite numbers (a section lacks a value?)")
    return x


def _need(*samples) -> None:
    if len(samples) < 2:
        raise InputError("a comparison needs at least 2 batches")
    for x in samples:
        if x.size < 2:
            raise InputError("every batch in a test needs at least 2 sections")


def json_number(v):
    """A number for JSON: numpy scalars to Python, NaN and infinities to None."""
    if isinstance(v, (bool, np.bool_)):
        return bool(v)
    if isinstance(v, (float, np.floating)):
        return float(v) if math.isfinite(v) else None
    return v


def sig(x: float, digits: int = 2) -> str:
    """*x* rounded to *digits* significant digits, without an exponent for ordinary sizes."""
    if x is None or not math.isfinite(x):
        return "–"
    if x == 0:
        return "0"
    mag = math.floor(math.log10(abs(x)))
    if mag < -4 or mag > 6:
        return f"{x:.{digits - 1}e}"
    decimals = max(0, digits - 1 - mag)
    return f"{round(x, decimals):.{decimals}f}"


def p_text(p: float) -> str:
    """A p-value for a sentence: ``"p = 0.012"``, ``"p < 0.001"``."""
    if p is None or not math.isfinite(p):
        return "p undefined"
    if p < 0.001:
        return "p < 0.001"
    return f"p = {sig(p)}"
