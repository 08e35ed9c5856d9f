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
"batch B's conductivity is 7.6 ± 6.2 % lower (relative) than batch A's (9.3 against 10.07 W/(m·K)), p = 0.028"

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
import re
from dataclasses import dataclass, field

import numpy as np

from ..core.atomic import atomic_write_text
from .batch import Grouping, measured_of, read_manifest
from ..core.errors import InputError
from ..present.htmlkit import CAUTION_MANY_SECTION, PALETTE, figure_png, grid, new_axes, page
from ..core.quantities import (ESTIMATE_3D_COLUMNS, SCALAR_COLUMNS, fraction_column,
                                quantity_keys)
from ..present.record import SCHEMA, headline, plain, read_result, whole_image_variances
from ..present.units import (column_words, kind_of, number, scale_of, with_uncertainty,
                             with_unit)
from .measured import batch_measured, computed_of, html_measured, measured_dict
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
    solved, solved_3d : dict
        Temperature (°C) → the effective properties of the section's model and of its 3D
        estimate (empty when not computed), for the measured values.
    measured : tuple
        The measured values that concern the section: its run configuration's and its
        batch's measured-values file's (`polisect.trust.measured.merge_measured`).
    """

    name: str
    batch: str
    values: dict
    within_variance: dict = field(default_factory=dict)
    json_path: str | None = None
    report: str | None = None
    solved: dict = field(default_factory=dict)
    solved_3d: dict = field(default_factory=dict)
    measured: tuple = ()


def section_from_result(result, *, name: str, batch: str, json_path: str | None = None,
                        report: str | None = None, measured=()) -> Section:
    """A `Section` from a `Result` (its headline numbers, window study and effective
    properties over temperature); *measured*: the batch's measured-values file's entries."""
    row = headline(result)
    values = {k: float(row[k]) for k in quantity_keys(row)}
    c = computed_of(result, measured)
    return Section(name, batch, values, whole_image_variances(result), json_path, report,
                   c.solved, c.solved_3d, c.measured)


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
        batch_wide = measured_of(manifest)
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
                                                report=report,
                                                measured=batch_wide.get(rel, ())))
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
        The findings in plain words, significant ones first.
    significant : bool
        A difference between batches at the significance level (outliers are in
        ``outliers``).
    scale : float
        Factor from the stored value to the unit shown (`unit`; expansion 10⁻⁶/K).
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
    significant: bool = False
    scale: float = 1.0

    def to_dict(self) -> dict:
        return {"key": self.key, "label": self.label, "unit": self.unit,
                "significant": self.significant, "scale_to_unit": self.scale,
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
    specs: tuple = ()
    measured: dict = field(default_factory=dict)
    """Batch → tuple of `polisect.trust.measured.BatchMeasured` (batches with measured
    values)."""

    def to_dict(self) -> dict:
        return {"schema": "polisect.compare/1", "alpha": self.alpha,
                "specs": [r.to_dict() for r in self.specs],
                "measured": {b: [measured_dict(m) for m in ms]
                             for b, ms in self.measured.items()},
                "batches": {b: [s.name for s in self.sections if s.batch == b]
                            for b in self.batches},
                "sections": [{"name": s.name, "batch": s.batch, "values": s.values,
                              "within_variance": s.within_variance, "json": s.json_path}
                             for s in self.sections],
                "quantities": [q.to_dict() for q in self.quantities]}

    def to_json(self) -> str:
        return json.dumps(plain(self.to_dict()), indent=2, allow_nan=False)

    def sentences(self) -> list[str]:
        """All findings in plain words, quantity by quantity (significant quantities
        first)."""
        return [s for q in self.grouped() for s in q.sentences]

    def grouped(self) -> list[QuantityComparison]:
        """The quantities with findings: those that differ significantly between batches
        first, then those with an outlier section, then the rest (stable otherwise)."""
        with_findings = [q for q in self.quantities if q.sentences]
        return sorted(with_findings, key=lambda q: (not q.significant, not q.outliers))


def compare(sections, quantities=None, alpha: float = ALPHA, specs=()) -> Comparison:
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
    specs : sequence of str or Spec
        Specification limits (``"porosity<=0.22"``, ``"k>=1.8"``; `parse_spec`), checked
        on every batch and section.

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
    compared = tuple(_compare_quantity(sections, batches, key, alpha) for key in quantities)
    keys = list(dict.fromkeys(k for s in sections for k in s.values))
    parsed = [x if isinstance(x, Spec) else parse_spec(x, keys) for x in specs]
    summaries = {q.key: q.summaries for q in compared}
    checked = []
    for sp in parsed:
        sums = summaries.get(sp.key)
        if sums is None:
            sums = _compare_quantity(sections, batches, sp.key, alpha).summaries
        checked.append(check_spec(sp, sections, sums))
    return Comparison(batches, sections, compared, alpha, tuple(checked),
                      batch_measured({b: [s for s in sections if s.batch == b]
                                      for b in batches}))


def _difference_sentence(key, label, unit, scale, ref, other, x, y, d) -> str:
    """Batch *other* against *ref*: fractions in percentage points, other quantities in
    relative %, ± the 95 % interval of the difference, both means with their unit."""
    mx, my = float(np.mean(x)), float(np.mean(y))
    if not math.isfinite(d.relative_pct):
        return d.sentence
    p = p_text(d.p_adjusted)
    direction = "higher" if my > mx else "lower"
    means = f"{number(my * scale)} against {with_unit(number(mx * scale), unit)}"
    if key.startswith("fraction_"):
        diff_pp = abs(my - mx) * 100.0
        half_pp = d.ci95_pct / 100.0 * abs(mx) * 100.0
        return (f"batch {other}'s {label} is {with_uncertainty(diff_pp, half_pp)} percentage "
                f"points {direction} than batch {ref}'s ({means}), {p}")
    return (f"batch {other}'s {label} is {with_uncertainty(abs(d.relative_pct), d.ci95_pct)}"
            f" % {direction} (relative) than batch {ref}'s ({means}), {p}")


def _compare_quantity(sections, batches, key, alpha) -> QuantityComparison:
    label, unit, scale = column_words(key)
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
                                 f"({number(g.value * scale)} against a batch mean of "
                                 f"{with_unit(number(float(v.mean()) * scale), unit)}; "
                                 f"Grubbs G = {g.statistic:.3f} > {g.critical:.3f} at n = "
                                 f"{g.n}, "
                                 f"α = {alpha})")
    testable = [b for b, v in values.items() if v.size >= 2]
    tests, diffs = [], []
    significant = False
    first, later = sentences, []
    if len(testable) >= 2:
        groups = [values[b] for b in testable]
        if len(testable) == 2:
            tests.append(welch_t(*groups))
        else:
            tests += [one_way_anova(groups), welch_anova(groups)]
            p = tests[1].p_value if math.isfinite(tests[1].p_value) else tests[0].p_value
            verdict = "differs" if p < alpha else "does not differ significantly"
            significant |= p < alpha
            (first if p < alpha else later).append(
                f"the {label} {verdict} between the {len(testable)} batches "
                f"(Welch's ANOVA {p_text(tests[1].p_value)}; one-way ANOVA "
                f"{p_text(tests[0].p_value)})")
        ref = testable[0]
        raw = [welch_t(values[ref], values[b]).p_value for b in testable[1:]]
        adjusted = holm(raw)
        for b, p_adj in zip(testable[1:], adjusted):
            d = difference(label, ref, values[ref], b, values[b], p_adjusted=p_adj)
            diffs.append(d)
            hit = math.isfinite(d.p_adjusted) and d.p_adjusted < alpha
            significant |= hit
            (first if hit else later).append(
                _difference_sentence(key, label, unit, scale, ref, b, values[ref], values[b], d)
                + (" (Holm-adjusted over the pairs)" if len(testable) > 2 else ""))
    spreads = {}
    for b, m in members.items():
        with_w = [s for s in m if _finite(s.within_variance.get(key))]
        if len(with_w) >= 2:
            sp = section_spread([s.values[key] for s in with_w],
                                [s.within_variance[key] for s in with_w], batch=b, label=label)
            spreads[b] = sp
            later.append(sp.sentence)
    return QuantityComparison(key, label, unit, summaries, gitman, tuple(outliers),
                              tuple(tests), tuple(diffs), spreads, tuple(first + later),
                              significant, scale)


# ----------------------------------------------------------------- specification limits

_SPEC_SHORT = {"k": "conductivity", "E": "youngs_modulus", "nu": "poisson_ratio",
               "K": "bulk_modulus", "G": "shear_modulus", "alpha": "expansion"}
_COLUMN_OF = {name: column for column, name in SCALAR_COLUMNS.items()}
SPEC_ALIASES = {**{short: _COLUMN_OF[name] for short, name in _SPEC_SHORT.items()},
                **_COLUMN_OF,
                **{f"{short}_3d": ESTIMATE_3D_COLUMNS[name] for short, name in _SPEC_SHORT.items()
                   if name in ESTIMATE_3D_COLUMNS}}
"""Short names a specification may use → headline column."""

PORE_NAMES = ("pore", "pores", "porosity", "air", "void")
"""Phase names counted as porosity by ``porosity`` in a specification."""

_SPEC = re.compile(r"^\s*([A-Za-z_][\w\-]*)\s*(<=|>=|<|>)\s*([-+0-9.eE]+)\s*(%?)\s*$")


@dataclass(frozen=True)
class Spec:
    """One specification limit, e.g. ``porosity<=0.22`` or ``k>=1.8``.

    The limit is given in the unit people read (`polisect.present.units`: expansion in
    10⁻⁶/K, fractions as fractions or with ``%``); ``limit`` is in the stored unit.
    """

    text: str
    key: str
    op: str
    limit: float

    def passes(self, value: float) -> bool:
        """Whether *value* (stored unit) meets the limit."""
        return {"<=": value <= self.limit, ">=": value >= self.limit,
                "<": value < self.limit, ">": value > self.limit}[self.op]


def parse_spec(text: str, keys) -> Spec:
    """A `Spec` from ``NAME<=LIMIT`` (or ``>=``, ``<``, ``>``), NAME a headline column, a
    short name (`SPEC_ALIASES`), a phase name (its fraction) or ``porosity``.

    Examples
    --------
    >>> parse_spec("porosity<=22%", ["fraction_pore", "conductivity_W_mK"]).limit
    0.22
    >>> parse_spec("alpha <= 6.5", ["expansion_per_K"]).limit
    6.5e-06
    """
    m = _SPEC.match(text)
    if not m:
        raise InputError(f"--spec {text!r}: write NAME<=LIMIT or NAME>=LIMIT, e.g. "
                         "--spec 'porosity<=0.22' --spec 'k>=1.8'")
    name, op, number_text, pct = m.groups()
    keys = list(keys)
    key = _spec_key(name, keys)
    if key is None:
        known = sorted(set(SPEC_ALIASES) | {k[len("fraction_"):] for k in keys
                                             if k.startswith("fraction_")} | {"porosity"})
        raise InputError(f"--spec {text!r}: {name!r} is not a quantity of these sections; use "
                         f"one of {', '.join(known)} or a column of summary.csv")
    try:
        shown = float(number_text)
    except ValueError:
        raise InputError(f"--spec {text!r}: {number_text!r} is not a number") from None
    if pct:
        shown /= 100.0
    return Spec(text.strip(), key, op, shown / scale_of(kind_of(key)))


def _spec_key(name: str, keys: list[str]) -> str | None:
    if name in keys:
        return name
    if name in SPEC_ALIASES and SPEC_ALIASES[name] in keys:
        return SPEC_ALIASES[name]
    if fraction_column(name) in keys:
        return fraction_column(name)
    if name == "porosity":
        for pore in PORE_NAMES:
            if fraction_column(pore) in keys:
                return fraction_column(pore)
    return None


@dataclass(frozen=True)
class SpecResult:
    """A specification checked on every batch (its mean and 95 % interval) and section.

    ``batches``: batch → (mean, 95 % half-width or None, verdict) with the verdict
    ``"pass"`` (the whole interval meets the limit), ``"fail"`` (the mean does not) or
    ``"marginal"`` (the mean meets it, the interval crosses it); ``sections``: one
    (section, batch, value, passed) per section (names may repeat across batches).
    """

    spec: Spec
    batches: dict
    sections: tuple

    def to_dict(self) -> dict:
        return {"spec": self.spec.text, "key": self.spec.key, "op": self.spec.op,
                "limit": self.spec.limit,
                "batches": {b: {"mean": json_number(m), "ci95": json_number(h),
                                "verdict": v} for b, (m, h, v) in self.batches.items()},
                "sections": [{"section": s, "batch": b, "value": json_number(v), "passed": ok}
                             for s, b, v, ok in self.sections]}


def check_spec(spec: Spec, sections, summaries: dict) -> SpecResult:
    """*spec* on every batch (from its `Summary`) and every section."""
    batches = {}
    for b, s in summaries.items():
        half = s.ci95 if s.n >= 2 and _finite(s.ci95) else None
        if not spec.passes(s.mean):
            verdict = "fail"
        elif half is not None and not (spec.passes(s.mean - half)
                                       and spec.passes(s.mean + half)):
            verdict = "marginal"
        else:
            verdict = "pass"
        batches[b] = (s.mean, half, verdict)
    rows = tuple((x.name, x.batch, x.values[spec.key], spec.passes(x.values[spec.key]))
                 for x in sections if _finite(x.values.get(spec.key)))
    return SpecResult(spec, batches, rows)


# ----------------------------------------------------------------------------- HTML

def html_comparison(comparison: Comparison, title: str = "Section comparison") -> str:
    """The comparison as a self-contained HTML page (figures embedded)."""
    parts = [CAUTION_MANY_SECTION, _html_overview(comparison), html_measured(comparison.measured),
             _html_specs(comparison),
             _html_findings(comparison), _html_outliers(comparison)]
    parts += [_html_quantity(q, comparison) for q in comparison.quantities]
    parts.append(_HOW_TO_READ)
    return page(title, f"{len(comparison.sections)} sections in "
                       f"{len(comparison.batches)} batch(es)", "".join(parts))


def write_html(comparison: Comparison, path, title: str = "Section comparison") -> None:
    """Write `html_comparison` atomically."""
    atomic_write_text(path, html_comparison(comparison, title))


def mean_text(q: QuantityComparison, batch: str) -> str:
    """A batch's mean ± 95 % interval in the unit people read, e.g. ``0.201 ± 0.012``."""
    s = q.summaries[batch]
    half = s.ci95 if s.n >= 2 and _finite(s.ci95) else None
    return with_uncertainty(s.mean, half, q.scale)


def means_lines(c: Comparison) -> list[str]:
    """One console line per quantity: every batch's mean ± 95 % interval and n."""
    lines = []
    for q in c.quantities:
        cells = "; ".join(f"{b} {mean_text(q, b)} (n = {q.summaries[b].n})"
                          for b in q.summaries)
        lines.append(f"{q.label}{' (' + q.unit + ')' if q.unit else ''}: {cells}")
    return lines


def spec_lines(c: Comparison) -> list[str]:
    """Console lines of the specification checks: per batch, then failing sections."""
    lines = []
    for r in c.specs:
        verdicts = ", ".join(f"{b} {v.upper()}" for b, (_, _, v) in r.batches.items())
        failed = [f"{b}: {s}" for s, b, _, ok in r.sections if not ok]
        passed = len(r.sections) - len(failed)
        lines.append(f"spec {r.spec.text}: {verdicts}; sections {passed} of "
                     f"{len(r.sections)} pass" + (f" (fail: {', '.join(failed)})"
                                                  if failed else ""))
    return lines


def _html_overview(c: Comparison) -> str:
    rows = [(b, str(sum(s.batch == b for s in c.sections))) for b in c.batches]
    head = ("Quantity",) + tuple(f"{b}: mean ± 95 % (n)" for b in c.batches)
    means = []
    for q in c.quantities:
        unit = f" ({q.unit})" if q.unit else ""
        means.append((q.label[:1].upper() + q.label[1:] + unit,) + tuple(
            "–" if b not in q.summaries else f"{mean_text(q, b)} ({q.summaries[b].n})"
            for b in c.batches))
    return ("<section><h2>Batches</h2>" + grid(("Batch", "Sections"), rows)
            + "<h3>Batch means</h3>" + grid(head, means)
            + '<p class="note">± is the 95 % confidence interval of the batch mean (Student t, '
            "n − 1 degrees of freedom).</p></section>")


def _html_specs(c: Comparison) -> str:
    if not c.specs:
        return ""
    rows, secs = [], []
    for r in c.specs:
        _, unit, scale = column_words(r.spec.key)
        for b, (mean, half, verdict) in r.batches.items():
            rows.append((r.spec.text, b, with_unit(with_uncertainty(mean, half, scale), unit),
                         verdict))
        for name, b, value, ok in r.sections:
            secs.append((r.spec.text, b, name, with_unit(number(value * scale), unit),
                         "pass" if ok else "FAIL"))
    return ("<section><h2>Specification limits</h2>"
            + grid(("Limit", "Batch", "Mean ± 95 %", "Verdict"), rows)
            + '<p class="note">pass: the whole 95 % interval of the batch mean meets the limit; '
            "marginal: the mean meets it, the interval crosses it; fail: the mean does not "
            "meet it.</p><details><summary>Every section against the limits</summary>"
            + grid(("Limit", "Batch", "Section", "Value", "Verdict"), secs)
            + "</details></section>")


def _html_findings(c: Comparison) -> str:
    groups = c.grouped()
    if not groups:
        return ""
    parts = []
    for q in groups:
        tag = (' <span class="sig">differs between batches</span>' if q.significant
               else ' <span class="nsig">no significant difference</span>')
        if q.outliers:
            tag += f' <span class="nsig">{len(q.outliers)} outlier section(s)</span>'
        items = "".join(f"<li>{html.escape(x)}</li>" for x in q.sentences)
        parts.append(f"<h3>{html.escape(q.label[:1].upper() + q.label[1:])}{tag}</h3>"
                     f"<ul>{items}</ul>")
    return ("<section><h2>Findings</h2>" + "".join(parts)
            + '<p class="note">Grouped by quantity: significant differences between batches '
            f"first, then quantities with an outlier section (α = {c.alpha}). Fractions "
            "differ in percentage points, other quantities in per cent of the first batch's "
            "mean (relative); ± is the 95 % interval of the difference.</p></section>")


def _html_outliers(c: Comparison) -> str:
    rows = []
    for q in c.quantities:
        for o in q.outliers:
            rows.append((o.section, o.batch, q.label, number(o.value * q.scale),
                         number(o.batch_mean * q.scale), q.unit or "–",
                         f"{o.grubbs.statistic:.3f} > {o.grubbs.critical:.3f}"))
    body = (grid(("Section", "Batch", "Quantity", "Value", "Batch mean", "Unit", "Grubbs G"),
                 rows) if rows else "<p>No section stands out (Grubbs' two-sided test, "
            f"α = {c.alpha}, batches of three or more sections).</p>")
    return f"<section><h2>Outliers</h2>{body}</section>"


def _html_quantity(q: QuantityComparison, c: Comparison) -> str:
    unit = f" ({q.unit})" if q.unit else ""
    head = ("Batch", "n", "Mean", "SD", "SE", "95 % CI ±", "%RA", "χ² (Gitman)",
            "Spread / window study")
    rows = []
    for b, s in q.summaries.items():
        g = q.gitman.get(b)
        sp = q.spreads.get(b)
        sc = q.scale
        rows.append((b, str(s.n), number(s.mean * sc), number(s.sd * sc, 3),
                     number(s.se * sc, 3), number(s.ci95 * sc, 3),
                     number(s.relative_accuracy_pct, 2),
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
            + f'<figure class="wide"><img alt="{html.escape(q.label)}" src="{_plot(q, c)}">'
            "</figure></section>")


def _plot(q: QuantityComparison, c: Comparison) -> str:
    fig, ax = new_axes((max(3.6, 1.3 * len(q.summaries) + 1.6), 3.2))
    flagged = {(o.batch, o.section) for o in q.outliers}
    for i, (b, s) in enumerate(q.summaries.items()):
        secs = [x for x in c.sections if x.batch == b and _finite(x.values.get(q.key))]
        ys = np.array([x.values[q.key] for x in secs]) * q.scale
        xs = i + (np.linspace(-0.18, 0.18, ys.size) if ys.size > 1 else np.zeros(1))
        color = PALETTE[i % len(PALETTE)]
        ax.scatter(xs, ys, s=18, color=color, alpha=0.8, zorder=3)
        bad = [j for j, x in enumerate(secs) if (b, x.name) in flagged]
        if bad:
            ax.scatter(xs[bad], ys[bad], s=80, facecolors="none", edgecolors="#c8553d",
                       linewidths=1.5, zorder=4, label="Grubbs outlier")
        if s.n >= 2:
            ax.errorbar(i + 0.32, s.mean * q.scale, yerr=s.ci95 * q.scale, fmt="s",
                        color="#1d232b", capsize=4,
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
