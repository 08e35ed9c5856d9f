"""Tests of polisect.trust.sectionstats: ASTM E562 summaries, Grubbs, Welch, ANOVA, spread, Gitman."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from polisect.core.errors import InputError
from polisect.trust.sectionstats import (difference, gitman_chi2, grubbs, grubbs_critical, holm,
                                   one_way_anova, section_spread, summarize, welch_anova, welch_t)

RNG = np.random.default_rng(20240607)
SAMPLES = [RNG.normal(10.0, 1.0, 7), RNG.normal(11.0, 2.5, 12), RNG.normal(9.5, 0.4, 5),
           RNG.normal(10.2, 1.5, 9)]


@pytest.mark.parametrize("a, b", [(0, 1), (1, 2), (2, 3), (0, 3)])
def test_welch_t_matches_scipy(a, b):
    """Welch's t-test equals scipy.stats.ttest_ind(equal_var=False) to 1e-10 (statistic,
    Welch–Satterthwaite df, two-sided p). Source: Welch (1947), Biometrika 34, 28; scipy."""
    ours = welch_t(SAMPLES[a], SAMPLES[b])
    ref = stats.ttest_ind(SAMPLES[a], SAMPLES[b], equal_var=False)
    assert ours.statistic == pytest.approx(ref.statistic, rel=1e-10, abs=1e-12)
    assert ours.p_value == pytest.approx(ref.pvalue, rel=1e-10, abs=1e-12)
    assert ours.df[0] == pytest.approx(ref.df, rel=1e-10)


@pytest.mark.parametrize("k", [2, 3, 4])
def test_one_way_anova_matches_scipy(k):
    """Classical one-way ANOVA equals scipy.stats.f_oneway to 1e-10. Source: Fisher (1925);
    scipy."""
    ours = one_way_anova(SAMPLES[:k])
    ref = stats.f_oneway(*SAMPLES[:k])
    assert ours.statistic == pytest.approx(ref.statistic, rel=1e-10)
    assert ours.p_value == pytest.approx(ref.pvalue, rel=1e-10)
    assert ours.df == (k - 1, sum(len(s) for s in SAMPLES[:k]) - k)


def test_welch_anova_two_groups_is_welch_t():
    """For two groups Welch's (1951) ANOVA reduces exactly to Welch's t-test: F = t², the
    denominator df is the Welch–Satterthwaite df and the p-values agree — checked against
    scipy.stats.ttest_ind(equal_var=False) to 1e-10. Source: Welch (1951), Biometrika 38, 330
    (the k = 2 case, derived by hand: B = 1, A = t², (k² − 1)/(3Λ) = 1/Λ = ν_WS)."""
    for a, b in [(0, 1), (1, 2), (2, 3)]:
        ours = welch_anova([SAMPLES[a], SAMPLES[b]])
        ref = stats.ttest_ind(SAMPLES[a], SAMPLES[b], equal_var=False)
        assert ours.statistic == pytest.approx(ref.statistic ** 2, rel=1e-10)
        assert ours.df[1] == pytest.approx(ref.df, rel=1e-10)
        assert ours.p_value == pytest.approx(ref.pvalue, rel=1e-10)


def _welch_anova_matrix_form(groups):
    """Welch's test in the matrix form of Johansen (1980), Biometrika 67, 85-92 (from memory):
    T = (Cx̄)ᵀ(CVCᵀ)⁻¹(Cx̄) with V = diag(sᵢ²/nᵢ) and C any (k−1)×k contrast matrix of full
    rank; A = Σ(1 − wᵢ/W)²/(nᵢ − 1); F = T / (k − 1 + 2A − 6A/(k + 1)); ν₂ = (k² − 1)/(3A)."""
    k = len(groups)
    n = np.array([len(g) for g in groups], dtype=float)
    means = np.array([np.mean(g) for g in groups])
    var = np.array([np.var(g, ddof=1) for g in groups])
    contrast = np.hstack([np.eye(k - 1), -np.ones((k - 1, 1))])
    contrast = contrast @ np.diag(np.arange(1.0, k + 1))   # a different full-rank contrast
    contrast[:, -1] = -contrast[:, :-1].sum(axis=1)
    V = np.diag(var / n)
    d = contrast @ means
    T = float(d @ np.linalg.solve(contrast @ V @ contrast.T, d))
    w = n / var
    A = float(((1 - w / w.sum()) ** 2 / (n - 1)).sum())
    F = T / (k - 1 + 2 * A - 6 * A / (k + 1))
    df2 = (k * k - 1) / (3 * A)
    return F, df2, stats.f.sf(F, k - 1, df2)


@pytest.mark.parametrize("k", [3, 4])
def test_welch_anova_matches_independent_matrix_form(k):
    """Welch's ANOVA (scalar form of Welch 1951) equals the independent generalized-least-
    squares matrix form of Johansen (1980), Biometrika 67, 85 (from memory), to 1e-10. scipy
    has no Welch ANOVA."""
    F, df2, p = _welch_anova_matrix_form(SAMPLES[:k])
    ours = welch_anova(SAMPLES[:k])
    assert ours.statistic == pytest.approx(F, rel=1e-10)
    assert ours.df[1] == pytest.approx(df2, rel=1e-10)
    assert ours.p_value == pytest.approx(p, rel=1e-10)


@pytest.mark.parametrize("n, table", [(5, 1.715), (10, 2.290)])
def test_grubbs_critical_values_match_published_table(n, table):
    """Two-sided 5 % critical values of Grubbs' statistic (upper 2.5 % one-sided column):
    n = 5 → 1.715, n = 10 → 2.290. Source: Grubbs (1969), Technometrics 11, 1, Table I;
    the same values in ASTM E178, Table 1 (both from memory). The table has 3 decimals."""
    assert grubbs_critical(n, 0.05) == pytest.approx(table, abs=6e-4)


def test_grubbs_flags_a_planted_outlier_only():
    """A value 6 sd away in a sample of 10 is flagged; the clean sample is not. Source:
    Grubbs (1969) procedure; values common practice (no source)."""
    clean = np.array([10.1, 9.9, 10.0, 10.2, 9.8, 10.05, 9.95, 10.1, 9.9, 10.0])
    assert not grubbs(clean).outlier
    dirty = clean.copy()
    dirty[3] = 11.5
    g = grubbs(dirty)
    assert g.outlier and g.index == 3 and g.value == 11.5
    with pytest.raises(InputError):
        grubbs([1.0, 2.0])


@settings(max_examples=40, deadline=None)
@given(st.lists(st.floats(-1e3, 1e3, allow_nan=False), min_size=3, max_size=12),
       st.floats(0.1, 100.0), st.floats(-100.0, 100.0))
def test_grubbs_statistic_is_affine_invariant(values, scale, shift):
    """G = max|x − x̄|/s does not change under x → a·x + b, a > 0 (from the definition)."""
    x = np.array(values)
    if np.ptp(x) < 1e-6 * max(1.0, np.abs(x).max()):
        return
    g1 = grubbs(x).statistic
    g2 = grubbs(scale * x + shift).statistic
    assert g2 == pytest.approx(g1, rel=1e-6)


def test_summary_is_astm_e562_interval():
    """95 % CI = t·s/√n with Student t for n − 1 = 3 df (t = 3.182, from memory) and
    %RA = CI/mean·100. Source: ASTM E562."""
    s = summarize([10.0, 12.0, 11.0, 13.0])
    sd = math.sqrt(5.0 / 3.0)
    assert s.n == 4 and s.mean == 11.5 and s.sd == pytest.approx(sd)
    assert s.se == pytest.approx(sd / 2.0)
    assert s.ci95 == pytest.approx(3.182 * sd / 2.0, rel=2e-4)
    assert s.relative_accuracy_pct == pytest.approx(s.ci95 / 11.5 * 100.0)
    one = summarize([3.0])
    assert one.n == 1 and math.isnan(one.ci95)


def test_difference_sentence():
    """The plain sentence names both batches, the direction, the percent with its 95 % Welch
    interval and the p-value (format: common practice, no source)."""
    a = [10.0, 10.4, 9.8, 10.2]
    b = [9.1, 9.5, 9.3, 9.6]
    d = difference("conductivity", "A", a, "B", b)
    rel = (np.mean(b) - np.mean(a)) / np.mean(a) * 100
    assert d.relative_pct == pytest.approx(rel)
    ref = stats.ttest_ind(a, b, equal_var=False)
    half = stats.t.ppf(0.975, ref.df) * math.sqrt(np.var(a, ddof=1) / 4 + np.var(b, ddof=1) / 4)
    assert d.ci95_pct == pytest.approx(half / np.mean(a) * 100)
    assert d.sentence.startswith("batch B's conductivity is 7.2 ± 4.1 % lower than batch A's")
    assert "p = 0.0056" in d.sentence
    same = difference("conductivity", "A", a, "B", [10.1, 10.0, 10.3, 9.9])
    assert "not significant" in same.sentence


def test_spread_test_is_calibrated():
    """Under homogeneity (section values drawn with the variance the window studies predict)
    the chi-square spread test rejects at α = 0.05 in about 5 % of batches (binomial limits
    for 4000 trials: 4.1–5.9 %); half the sections shifted by 5 sd are detected. Source: the
    χ² law of the sample variance of normal values (common practice)."""
    rng = np.random.default_rng(3)
    within = np.full(8, 0.04)
    rejections = sum(section_spread(rng.normal(5.0, 0.2, 8), within).test.p_value < 0.05
                     for _ in range(4000))
    assert 0.041 < rejections / 4000 < 0.059
    sp = section_spread(rng.normal(5.0, 0.2, 8) + np.array([0, 0, 0, 0, 1, 1, 1, 1]), within,
                        batch="K", label="conductivity")
    assert sp.test.p_value < 0.01 and sp.ratio > 1.5 and "heterogeneous" in sp.sentence
    x = np.array([1.0, 1.2, 0.9, 1.1])
    sp = section_spread(x, [0.01] * 4)
    assert sp.test.statistic == pytest.approx(3 * np.var(x, ddof=1) / 0.01)


def test_gitman_criterion():
    """χ² of the values in percent of their mean against χ²₀.₉₅(n − 1). Source: Gitman, Askes
    & Sluys (2007), Eng. Fract. Mech. 74, 2518 (criterion); scaling to percent is this
    implementation's stated choice."""
    x = np.array([100.0, 104.0, 96.0, 101.0, 99.0])
    g = gitman_chi2(x)
    assert g.chi2 == pytest.approx(((x - 100.0) ** 2).sum() / 100.0)
    assert g.critical == pytest.approx(stats.chi2.ppf(0.95, 4))
    assert g.passed
    assert gitman_chi2(x * 7.3e-6).chi2 == pytest.approx(g.chi2)
    assert not gitman_chi2([100.0, 130.0, 70.0, 110.0, 90.0]).passed


def test_holm_step_down():
    """Holm's adjusted p-values: sorted pᵢ·(m − i + 1), made monotone, capped at 1. Source:
    Holm (1979), Scand. J. Statist. 6, 65."""
    assert holm([0.01, 0.04, 0.03]) == pytest.approx([0.03, 0.06, 0.06])
    assert holm([0.5, 0.9]) == pytest.approx([1.0, 1.0])

