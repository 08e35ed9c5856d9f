"""Sections of a batch, and batches against each other.

Per batch and per quantity (every phase fraction, particle D50, each effective property):
n, mean, standard deviation, standard error, the 95 % confidence interval of the mean with
Student's t and the relative accuracy %RA of ASTM E562. Sections that do not belong are
flagged with Grubbs' two-sided test. Two batches are compared with Welch's t-test, more
with one-way ANOVA and Welch's ANOVA; the result is also said in a plain sentence. When
the sections carry a window study (`polisect.trust.windows`), the section-to-section spread is
tested against the spread one section's window study predicts. The statistics themselves
are in `polisect.trust.sectionstats`.

Examples
--------
>>> a = [Section(f"A{i}", "A", {"conductivity_W_mK": v}) for i, v in enumerate([10.0, 10.4, 9.8])]
>>> b = [Section(f"B{i}", "B", {"conductivity_W_mK": v}) for i, v in enumerate([9.1, 9.5, 9.3])]
>>> compare(a + b).sentences()[0]
"batch B's conductivity is 7.6 ± 6.2 % lower than batch A's, p = 0.028"

References
----------
See `polisect.trust.sectionstats` (ASTM E562; Grubbs 1969; Welch 1947, 1951; Holm 1979;
Gitman, Askes & Sluys 2007) and Kanit et al. (2003), Int. J. Solids Struct. 40, 3647.
"""

from __future__ import annotations

import html
import json
import math
import os
from dataclasses import dataclass, field

import numpy as np

from ..core.atomic import atomic_write_text
from .batch import Grouping, read_manifest
from ..core.errors import InputError
from ..present.htmlkit import CAUTION_SECTION, PALETTE, figure_png, grid, new_axes, page
from ..core.quantities import quantity_keys, quantity_label
from ..present.record import SCHEMA, headline, plain, read_result, whole_image_variances
from ..trust.sectionstats import (ALPHA, Grubbs, difference, gitman_chi2, grubbs, holm, json_number,
                           one_way_anova, p_text, section_spread, sig, summarize, welch_anova,
                           welch_t)

# ----------------------------------------------------------------- sections and batches

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


def section_from_result(result, *, name: str, batch: str, json_path: str | None = None,
                        report: str | None = None) -> Section:
    """A `Section` from a `Result` (its headline numbers and window study)."""
    row = headline(result)
    values = {k: float(row[k]) for k in quantity_keys(row)}
    return Section(name, batch, values, whole_image_variances(result), json_path, report)


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
                result = read_result(path)
            except (OSError, ValueError) as exc:
                if manifest is not None:
                    raise InputError(f"{path}: listed as done in the manifest but unreadable "
                                     f"({exc}); run polisect batch --resume again") from None
                continue
            if grouping is not None:
                batch = grouping.group(result.source.path or path)
            elif group_by is None and group is not None:
                batch = group
            else:
                batch = dir_name
            sections.append(section_from_result(result, name=rel, batch=batch, json_path=path,
                                                report=report))
    if not sections:
        raise InputError(f"no result JSON files found in {', '.join(map(str, dirs))}; run "
                         "polisect analyze or polisect batch first")
    return sections


def _result_files(folder: str) -> list[str]:
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
                "value": json_number(self.value), "batch_mean": json_number(self.batch_mean),
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
        Batch → `BatchSpread` (batches whose sections carry window studies).
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
        return json.dumps(plain(self.to_dict()), indent=2, allow_nan=False)

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
                                 f"({sig(g.value)} against a batch mean of "
                                 f"{sig(float(v.mean()))}; Grubbs G = {g.statistic:.3f} > "
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
                             f"(Welch's ANOVA {p_text(tests[1].p_value)}; one-way ANOVA "
                             f"{p_text(tests[0].p_value)})")
        ref = testable[0]
        raw = [welch_t(values[ref], values[b]).p_value for b in testable[1:]]
        adjusted = holm(raw)
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


# ----------------------------------------------------------------------------- HTML

def html_comparison(comparison: Comparison, title: str = "Section comparison") -> str:
    """The comparison as a self-contained HTML page (figures embedded)."""
    parts = [CAUTION_SECTION, _html_overview(comparison)]
    parts += [_html_quantity(q, comparison) for q in comparison.quantities]
    parts.append(_HOW_TO_READ)
    return page(title, f"{len(comparison.sections)} sections in "
                       f"{len(comparison.batches)} batch(es)", "".join(parts))


def write_html(comparison: Comparison, path, title: str = "Section comparison") -> None:
    """Write `html_comparison` atomically."""
    atomic_write_text(path, html_comparison(comparison, title))


def _html_overview(c: Comparison) -> str:
    rows = [(b, str(sum(s.batch == b for s in c.sections))) for b in c.batches]
    items = "".join(f"<li>{html.escape(s)}</li>" for s in c.sentences())
    findings = f"<h3>Findings</h3><ul>{items}</ul>" if items else ""
    return ("<section><h2>Batches</h2>" + grid(("Batch", "Sections"), rows) + findings
            + "</section>")


def _html_quantity(q: QuantityComparison, c: Comparison) -> str:
    unit = f" ({q.unit})" if q.unit else ""
    head = ("Batch", "n", "Mean", "SD", "SE", "95 % CI ±", "%RA", "χ² (Gitman)",
            "Spread / window study")
    rows = []
    for b, s in q.summaries.items():
        g = q.gitman.get(b)
        sp = q.spreads.get(b)
        rows.append((b, str(s.n), sig(s.mean, 4), sig(s.sd, 3), sig(s.se, 3),
                     sig(s.ci95, 3), sig(s.relative_accuracy_pct, 2),
                     "–" if g is None else f"{g.chi2:.3g} / {g.critical:.3g} "
                     f"{'pass' if g.passed else 'fail'}",
                     "–" if sp is None else f"×{sig(sp.ratio)} ({p_text(sp.test.p_value)})"))
    tests = "".join(f"<li>{html.escape(t.name)}: statistic {sig(t.statistic, 4)}, df "
                    f"{', '.join(sig(v, 4) for v in t.df)}, {p_text(t.p_value)}</li>"
                    for t in q.tests)
    items = "".join(f"<li>{html.escape(s)}</li>" for s in q.sentences)
    return (f"<section><h2>{html.escape(q.label[:1].upper() + q.label[1:])}{html.escape(unit)}"
            f"</h2>{grid(head, rows)}"
            + (f"<ul>{tests}</ul>" if tests else "")
            + (f"<ul>{items}</ul>" if items else "")
            + f'<figure><img alt="{html.escape(q.label)}" src="{_plot(q, c)}"></figure>'
            "</section>")


def _plot(q: QuantityComparison, c: Comparison) -> str:
    fig, ax = new_axes((max(3.6, 1.3 * len(q.summaries) + 1.6), 3.2))
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


def _finite(v) -> bool:
    return v is not None and isinstance(v, (int, float)) and math.isfinite(v)
