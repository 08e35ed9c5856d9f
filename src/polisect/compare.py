"""Sections of a batch, and batches against each other: summary statistics, outliers, tests.

Per batch and per quantity (every phase fraction, particle D50, each effective property):
n, mean, standard deviation, standard error, the 95 % confidence interval of the mean with
Student's t and the relative accuracy %RA of ASTM E562. Sections that do not belong are
flagged with Grubbs' two-sided test. Two batches are compared with Welch's t-test, more
with one-way ANOVA and Welch's ANOVA; the result is also said in a plain sentence. When
the sections carry a window study (`polisect.rve`), the section-to-section spread is
tested against the spread one section's window study predicts.

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
"""

from __future__ import annotations

import html
import json
import math
import os
from dataclasses import dataclass, field

import numpy as np
from scipy import stats

from .errors import InputError

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
        return {k: _num(v) for k, v in self.__dict__.items()}


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
        return {k: _num(v) for k, v in self.__dict__.items()}


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
        return {"name": self.name, "statistic": _num(self.statistic),
                "df": [_num(v) for v in self.df], "p_value": _num(self.p_value)}


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
                "relative_pct": _num(self.relative_pct), "ci95_pct": _num(self.ci95_pct),
                "test": self.test.to_dict(), "p_adjusted": _num(self.p_adjusted),
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
        sentence = (f"batch {other}'s {label} is {_sig(abs(rel))} ± {_sig(ci)} % {way} than "
                    f"batch {reference}'s, {_p(p)}")
        if p >= ALPHA:
            sentence += " (not significant at the 5 % level)"
    return Difference(reference, other, label, rel, ci, test,
                      test.p_value if p_adjusted is None else p_adjusted, sentence)


@dataclass(frozen=True)
class Spread:
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
        return {"n": self.n, "between_sd": _num(self.between_sd),
                "within_sd": _num(self.within_sd), "ratio": _num(self.ratio),
                "test": self.test.to_dict(), "sentence": self.sentence}


def section_spread(values, within_variances, *, batch: str = "", label: str = "") -> Spread:
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
    Spread

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
        return Spread(x.size, math.sqrt(s2), 0.0, math.nan,
                      Significance("chi-square spread test", math.nan, (float(df),), math.nan),
                      f"batch {batch}: the window studies predict no spread of {label}")
    chi2 = df * s2 / sw2
    p = float(stats.chi2.sf(chi2, df))
    ratio = math.sqrt(s2 / sw2)
    test = Significance("chi-square spread test", chi2, (float(df),), p)
    if p < ALPHA:
        words = (f"the {label} of batch {batch}'s sections spreads {_sig(ratio)}× more than "
                 f"one section's window study predicts ({_p(p)}): the batch is heterogeneous")
    else:
        words = (f"the {label} of batch {batch}'s sections spreads as much as one section's "
                 f"window study predicts (ratio {_sig(ratio)}, {_p(p)}): no sign of "
                 "heterogeneity beyond sampling")
    return Spread(x.size, math.sqrt(s2), math.sqrt(sw2), ratio, test, words)


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
        return {"n": self.n, "chi2": _num(self.chi2), "critical": _num(self.critical),
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


# ----------------------------------------------------------------- sections and batches

QUANTITY_LABELS = {"conductivity_W_mK": ("conductivity", "W/(m·K)"),
                   "youngs_modulus_GPa": ("Young's modulus", "GPa"),
                   "poisson_ratio": ("Poisson's ratio", ""),
                   "bulk_modulus_GPa": ("bulk modulus", "GPa"),
                   "shear_modulus_GPa": ("shear modulus", "GPa"),
                   "expansion_per_K": ("thermal expansion", "1/K")}


def quantity_label(key: str) -> tuple[str, str]:
    """Words and unit of a headline column, e.g. ``"fraction_SiC"`` → ``("SiC fraction", "")``."""
    if key in QUANTITY_LABELS:
        return QUANTITY_LABELS[key]
    if key.startswith("fraction_"):
        return f"{key[len('fraction_'):]} fraction", ""
    if key.startswith("particles_") and key.endswith("_ecd_d50"):
        return f"{key[len('particles_'):-len('_ecd_d50')]} particle D50", "µm"
    return key, ""


def quantity_keys(row: dict) -> list[str]:
    """The headline columns that are compared: fractions, particle D50, effective properties."""
    keys = []
    for k, v in row.items():
        if not isinstance(v, (int, float)) or isinstance(v, bool):
            continue
        if (k.startswith("fraction_") and not k.endswith(("_ci95_low", "_ci95_high"))) \
                or (k.startswith("particles_") and k.endswith("_ecd_d50")) \
                or k in QUANTITY_LABELS:
            keys.append(k)
    return keys


@dataclass(frozen=True)
class Section:
    """One analysed section as the comparison sees it.

    Attributes
    ----------
    name : str
        Its name in tables (the image path relative to the batch folder).
    batch : str
        The batch it belongs to.
    values : dict
        Headline quantity → value.
    within_variance : dict
        Quantity → variance of the whole-section value expected from its window study
        (empty without one).
    json_path : str or None
        The result JSON it was read from.
    report : str or None
        Its HTML report, when known.
    """

    name: str
    batch: str
    values: dict
    within_variance: dict = field(default_factory=dict)
    json_path: str | None = None
    report: str | None = None


def section_from_result(d: dict, *, name: str, batch: str, json_path: str | None = None,
                        report: str | None = None) -> Section:
    """A `Section` from a result's JSON form (its headline numbers and window study)."""
    from .results import headline

    row = headline(d)
    values = {k: float(row[k]) for k in quantity_keys(row)}
    within = {}
    windows = d.get("windows") or {}
    for key, fit in (windows.get("quantities") or {}).items():
        if fit.get("whole_image_variance") is not None:
            within[key] = float(fit["whole_image_variance"])
    return Section(name, batch, values, within, json_path, report)


def load_sections(dirs, group_by: str | None = None) -> list[Section]:
    """Read the result JSONs under one or more folders into `Section` records.

    Parameters
    ----------
    dirs : sequence of path
        Output folders of ``polisect batch`` (with ``manifest.json``) or any folders holding
        result JSONs (searched recursively).
    group_by : str, optional
        ``None``: the batch recorded by ``polisect batch`` in the manifest; without a
        manifest, each folder given is one batch. ``"dir"``: each folder given is one batch.
        ``"folder"``: the folder holding the source image. Otherwise a regular expression
        with a named group ``(?P<batch>...)`` matched against the image file name.

    Returns
    -------
    list of Section
    """
    from .batch import Grouping, read_manifest
    from .results import read_json

    grouping = None if group_by in (None, "dir") else Grouping.parse(group_by)
    sections = []
    for folder in dirs:
        folder = os.fspath(folder)
        if not os.path.isdir(folder):
            raise InputError(f"{folder}: not a folder; give folders written by polisect "
                             "batch or holding result JSON files")
        dir_name = os.path.basename(os.path.normpath(os.path.abspath(folder)))
        manifest = read_manifest(folder)
        if manifest is not None:
            entries = [(e["outputs"]["json"], rel, e["group"], e["outputs"].get("report"))
                       for rel, e in sorted(manifest["entries"].items()) if e["status"] == "done"]
            paths = [(os.path.join(folder, j), rel, g, r and os.path.join(folder, r))
                     for j, rel, g, r in entries]
        else:
            paths = [(p, os.path.relpath(p, folder), None, _report_beside(p))
                     for p in _result_files(folder)]
        for path, rel, group, report in paths:
            try:
                d = read_json(path)
            except (OSError, ValueError) as exc:
                if manifest is not None:
                    raise InputError(f"{path}: listed as done in the manifest but unreadable "
                                     f"({exc}); run polisect batch --resume again") from None
                continue
            if grouping is not None:
                batch = grouping.group(d["source"]["path"] or rel, folder)
            elif group_by is None and group is not None:
                batch = group
            else:
                batch = dir_name
            sections.append(section_from_result(d, name=rel, batch=batch, json_path=path,
                                                report=report))
    if not sections:
        raise InputError(f"no result JSON files found in {', '.join(map(str, dirs))}; run "
                         "polisect analyze or polisect batch first")
    return sections


def _result_files(folder: str) -> list[str]:
    from .results import SCHEMA

    found = []
    for root, dirnames, files in os.walk(folder):
        dirnames[:] = sorted(d for d in dirnames if not d.startswith("."))
        for f in sorted(files):
            if f.endswith(".json") and not f.startswith("."):
                path = os.path.join(root, f)
                try:
                    with open(path, encoding="utf-8") as fh:
                        head = fh.read(200)
                except OSError:
                    continue
                if SCHEMA in head:
                    found.append(path)
    return found


def _report_beside(json_path: str) -> str | None:
    report = json_path[:-len(".json")] + "_report.html"
    return report if os.path.exists(report) else None


@dataclass(frozen=True)
class Outlier:
    """A section that Grubbs' test flags on one quantity within its batch."""

    section: str
    batch: str
    quantity: str
    value: float
    batch_mean: float
    grubbs: Grubbs

    def to_dict(self) -> dict:
        return {"section": self.section, "batch": self.batch, "quantity": self.quantity,
                "value": _num(self.value), "batch_mean": _num(self.batch_mean),
                "grubbs": self.grubbs.to_dict()}


@dataclass(frozen=True)
class QuantityComparison:
    """Everything compared on one quantity.

    Attributes
    ----------
    key, label, unit : str
        Headline column, its words and unit.
    summaries : dict
        Batch → `Summary`.
    gitman : dict
        Batch → `Gitman` criterion across its sections (batches of ≥ 2 sections).
    outliers : tuple of Outlier
    tests : tuple of Significance
        Welch's t-test (two batches), or one-way ANOVA and Welch's ANOVA (more).
    differences : tuple of Difference
        Every batch against the first one.
    spreads : dict
        Batch → `Spread` (batches whose sections carry window studies).
    sentences : tuple of str
        The findings in plain words.
    """

    key: str
    label: str
    unit: str
    summaries: dict
    gitman: dict
    outliers: tuple
    tests: tuple
    differences: tuple
    spreads: dict
    sentences: tuple

    def to_dict(self) -> dict:
        return {"key": self.key, "label": self.label, "unit": self.unit,
                "summaries": {b: s.to_dict() for b, s in self.summaries.items()},
                "gitman_chi2": {b: g.to_dict() for b, g in self.gitman.items()},
                "outliers": [o.to_dict() for o in self.outliers],
                "tests": [t.to_dict() for t in self.tests],
                "differences": [d.to_dict() for d in self.differences],
                "spread": {b: s.to_dict() for b, s in self.spreads.items()},
                "sentences": list(self.sentences)}


@dataclass(frozen=True)
class Comparison:
    """The comparison of the sections of one or more batches."""

    batches: tuple[str, ...]
    sections: tuple[Section, ...]
    quantities: tuple[QuantityComparison, ...]
    alpha: float = ALPHA

    def to_dict(self) -> dict:
        return {"schema": "polisect.compare/1", "alpha": self.alpha,
                "batches": {b: [s.name for s in self.sections if s.batch == b]
                            for b in self.batches},
                "sections": [{"name": s.name, "batch": s.batch, "values": s.values,
                              "within_variance": s.within_variance, "json": s.json_path}
                             for s in self.sections],
                "quantities": [q.to_dict() for q in self.quantities]}

    def to_json(self) -> str:
        from .results import _plain

        return json.dumps(_plain(self.to_dict()), indent=2, allow_nan=False)

    def sentences(self) -> list[str]:
        """All findings in plain words, quantity by quantity."""
        return [s for q in self.quantities for s in q.sentences]


def compare(sections, quantities=None, alpha: float = ALPHA) -> Comparison:
    """Compare sections within and between batches on every quantity.

    Parameters
    ----------
    sections : sequence of Section
        The sections (`load_sections`); batches in order of first appearance.
    quantities : sequence of str, optional
        Headline columns to compare (default: every fraction, particle D50 and effective
        property found).
    alpha : float
        Significance level for Grubbs' test and the sentences (default 0.05).

    Returns
    -------
    Comparison

    References
    ----------
    Grubbs (1969); Welch (1947, 1951); Holm (1979); ASTM E562 — see the module docstring.
    """
    sections = tuple(sections)
    if not sections:
        raise InputError("nothing to compare: no sections given")
    batches = tuple(dict.fromkeys(s.batch for s in sections))
    if quantities is None:
        quantities = list(dict.fromkeys(k for s in sections for k in s.values))
    return Comparison(batches, sections,
                      tuple(_compare_quantity(sections, batches, key, alpha)
                            for key in quantities), alpha)


def _compare_quantity(sections, batches, key, alpha) -> QuantityComparison:
    label, unit = quantity_label(key)
    members = {b: [s for s in sections if s.batch == b and _finite(s.values.get(key))]
               for b in batches}
    members = {b: m for b, m in members.items() if m}
    values = {b: np.array([s.values[key] for s in m]) for b, m in members.items()}
    summaries = {b: summarize(v) for b, v in values.items()}
    gitman = {b: gitman_chi2(v) for b, v in values.items() if v.size >= 2}
    outliers, sentences = [], []
    for b, v in values.items():
        if v.size >= 3:
            g = grubbs(v, alpha)
            if g.outlier:
                sec = members[b][g.index]
                outliers.append(Outlier(sec.name, b, key, g.value, float(v.mean()), g))
                sentences.append(f"section {sec.name} stands out in batch {b} on {label} "
                                 f"({_sig(g.value)} against a batch mean of "
                                 f"{_sig(float(v.mean()))}; Grubbs G = {g.statistic:.3f} > "
                                 f"{g.critical:.3f} at n = {g.n}, α = {alpha})")
    testable = [b for b, v in values.items() if v.size >= 2]
    tests, diffs = [], []
    if len(testable) >= 2:
        groups = [values[b] for b in testable]
        if len(testable) == 2:
            tests.append(welch_t(*groups))
        else:
            tests += [one_way_anova(groups), welch_anova(groups)]
            p = tests[1].p_value if math.isfinite(tests[1].p_value) else tests[0].p_value
            verdict = "differs" if p < alpha else "does not differ significantly"
            sentences.append(f"the {label} {verdict} between the {len(testable)} batches "
                             f"(Welch's ANOVA {_p(tests[1].p_value)}; one-way ANOVA "
                             f"{_p(tests[0].p_value)})")
        ref = testable[0]
        raw = [welch_t(values[ref], values[b]).p_value for b in testable[1:]]
        adjusted = _holm(raw)
        for b, p_adj in zip(testable[1:], adjusted):
            d = difference(label, ref, values[ref], b, values[b], p_adjusted=p_adj)
            diffs.append(d)
            sentences.append(d.sentence + (" (Holm-adjusted over the pairs)"
                                           if len(testable) > 2 else ""))
    spreads = {}
    for b, m in members.items():
        with_w = [s for s in m if _finite(s.within_variance.get(key))]
        if len(with_w) >= 2:
            sp = section_spread([s.values[key] for s in with_w],
                                [s.within_variance[key] for s in with_w], batch=b, label=label)
            spreads[b] = sp
            sentences.append(sp.sentence)
    return QuantityComparison(key, label, unit, summaries, gitman, tuple(outliers),
                              tuple(tests), tuple(diffs), spreads, tuple(sentences))


def _holm(p_values) -> list[float]:
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


# ----------------------------------------------------------------------------- HTML

def html_comparison(comparison: Comparison, title: str = "Section comparison") -> str:
    """The comparison as a self-contained HTML page (figures embedded)."""
    from .report import _CSS, CAUTION

    parts = [f'<section class="caution"><strong>Caution.</strong> {html.escape(CAUTION)}'
             "</section>", _html_overview(comparison)]
    parts += [_html_quantity(q, comparison) for q in comparison.quantities]
    parts.append(_HOW_TO_READ)
    t = html.escape(title)
    return (f'<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8"><title>{t}</title>'
            f'<meta name="viewport" content="width=device-width, initial-scale=1">'
            f"<style>{_CSS}</style></head><body><header><h1>{t}</h1>"
            f'<p class="meta">{len(comparison.sections)} sections in '
            f"{len(comparison.batches)} batch(es)</p></header><main>{''.join(parts)}</main>"
            "</body></html>\n")


def write_html(comparison: Comparison, path, title: str = "Section comparison") -> None:
    """Write `html_comparison` atomically."""
    from .atomic import atomic_write_text

    atomic_write_text(path, html_comparison(comparison, title))


def _html_overview(c: Comparison) -> str:
    from .report import _grid

    rows = [(b, str(sum(s.batch == b for s in c.sections))) for b in c.batches]
    items = "".join(f"<li>{html.escape(s)}</li>" for s in c.sentences())
    findings = f"<h3>Findings</h3><ul>{items}</ul>" if items else ""
    return ("<section><h2>Batches</h2>" + _grid(("Batch", "Sections"), rows) + findings
            + "</section>")


def _html_quantity(q: QuantityComparison, c: Comparison) -> str:
    from .report import _grid

    unit = f" ({q.unit})" if q.unit else ""
    head = ("Batch", "n", "Mean", "SD", "SE", "95 % CI ±", "%RA", "χ² (Gitman)",
            "Spread / window study")
    rows = []
    for b, s in q.summaries.items():
        g = q.gitman.get(b)
        sp = q.spreads.get(b)
        rows.append((b, str(s.n), _sig(s.mean, 4), _sig(s.sd, 3), _sig(s.se, 3),
                     _sig(s.ci95, 3), _sig(s.relative_accuracy_pct, 2),
                     "–" if g is None else f"{g.chi2:.3g} / {g.critical:.3g} "
                     f"{'pass' if g.passed else 'fail'}",
                     "–" if sp is None else f"×{_sig(sp.ratio)} ({_p(sp.test.p_value)})"))
    tests = "".join(f"<li>{html.escape(t.name)}: statistic {_sig(t.statistic, 4)}, df "
                    f"{', '.join(_sig(v, 4) for v in t.df)}, {_p(t.p_value)}</li>"
                    for t in q.tests)
    items = "".join(f"<li>{html.escape(s)}</li>" for s in q.sentences)
    return (f"<section><h2>{html.escape(q.label[:1].upper() + q.label[1:])}{html.escape(unit)}"
            f"</h2>{_grid(head, rows)}"
            + (f"<ul>{tests}</ul>" if tests else "")
            + (f"<ul>{items}</ul>" if items else "")
            + f'<figure><img alt="{html.escape(q.label)}" src="{_plot(q, c)}"></figure>'
            "</section>")


def _plot(q: QuantityComparison, c: Comparison) -> str:
    import matplotlib.pyplot as plt

    from .report import PALETTE, figure_png

    fig, ax = plt.subplots(figsize=(max(3.6, 1.3 * len(q.summaries) + 1.6), 3.2))
    flagged = {(o.batch, o.section) for o in q.outliers}
    for i, (b, s) in enumerate(q.summaries.items()):
        secs = [x for x in c.sections if x.batch == b and _finite(x.values.get(q.key))]
        ys = np.array([x.values[q.key] for x in secs])
        xs = i + (np.linspace(-0.18, 0.18, ys.size) if ys.size > 1 else np.zeros(1))
        color = PALETTE[i % len(PALETTE)]
        ax.scatter(xs, ys, s=18, color=color, alpha=0.8, zorder=3)
        bad = [j for j, x in enumerate(secs) if (b, x.name) in flagged]
        if bad:
            ax.scatter(xs[bad], ys[bad], s=80, facecolors="none", edgecolors="#c8553d",
                       linewidths=1.5, zorder=4, label="Grubbs outlier")
        if s.n >= 2:
            ax.errorbar(i + 0.32, s.mean, yerr=s.ci95, fmt="s", color="#1d232b", capsize=4,
                        markersize=5, zorder=5)
    ax.set_xticks(range(len(q.summaries)), list(q.summaries))
    ax.set_xlim(-0.6, len(q.summaries) - 0.4)
    ax.set_ylabel(q.label + (f" ({q.unit})" if q.unit else ""))
    ax.grid(axis="y", alpha=0.3)
    ax.set_title("sections (dots); batch mean and 95 % interval (square)", fontsize=8)
    return figure_png(fig)


_HOW_TO_READ = (
    '<section><h2>How to read this page</h2><p class="note">'
    "Intervals are 95 % confidence intervals of the batch mean with Student's t for n − 1 "
    "degrees of freedom; %RA is the interval in percent of the mean (ASTM E562). Outliers: "
    "Grubbs' two-sided test at α = 0.05 (Grubbs 1969) on the most extreme section of each "
    "batch. Between batches: Welch's t-test for two batches (Welch 1947), one-way ANOVA and "
    "Welch's ANOVA (Welch 1951) for more; pairwise differences against the first batch are "
    "Holm-adjusted (Holm 1979) when more than two batches are compared. χ² (Gitman): the "
    "criterion of Gitman, Askes &amp; Sluys (2007) across the sections, values in percent of "
    "the mean (passes at a coefficient of variation of roughly 10 %). Spread / window study: "
    "the section-to-section standard deviation over the one expected from each section's own "
    "window study (Kanit et al. 2003); well above 1 with a small p-value, the batch is "
    "heterogeneous.</p></section>")


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


def _finite(v) -> bool:
    return v is not None and isinstance(v, (int, float)) and math.isfinite(v)


def _num(v):
    if isinstance(v, (bool, np.bool_)):
        return bool(v)
    if isinstance(v, (float, np.floating)):
        return float(v) if math.isfinite(v) else None
    return v


def _sig(x: float, digits: int = 2) -> str:
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


def _p(p: float) -> str:
    if p is None or not math.isfinite(p):
        return "p undefined"
    if p < 0.001:
        return "p < 0.001"
    return f"p = {_sig(p)}"
