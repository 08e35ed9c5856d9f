"""Command-line front end: ``polisect analyze | batch | compare | demo | materials | estimate |
bench``.

Exit codes: 0 success; 2 bad input (one line naming the input and what to fix, no
traceback); 1 internal error.
"""

from __future__ import annotations

import argparse
import dataclasses
import errno
import json
import os
import sys
import time
import traceback

from .. import __version__
from ..core.errors import InputError

EXIT_OK, EXIT_INTERNAL, EXIT_INPUT = 0, 1, 2


class _Progress:
    """Progress lines on stderr (silent with --quiet): the pipeline's stages, and during a
    long solve a line on the solver's iterations every `SOLVER_EVERY` seconds."""

    SOLVER_EVERY = 10.0

    def __init__(self, quiet: bool):
        self.quiet = quiet
        self.t0 = time.perf_counter()
        self.last = self.t0

    def __call__(self, message: str) -> None:
        if not self.quiet:
            self.last = time.perf_counter()
            print(f"[{self.last - self.t0:6.1f} s] {message}", file=sys.stderr, flush=True)

    def solver(self, facts: dict) -> None:
        """Observer of `polisect.properties.solve.progress`."""
        if facts["event"] != "iteration" or time.perf_counter() - self.last < self.SOLVER_EVERY:
            return
        what = f" ({facts['name']})" if facts.get("name") else ""
        self(f"  {facts['method']} solver, load case {facts['load_case']} of "
             f"{facts['load_cases']}{what}: iteration {facts['iteration']}, residual "
             f"{facts['residual']:.1e} (stops at {facts['tolerance']:.0e})")


def _add_analyze(sub):
    p = sub.add_parser("analyze", help="analyse one section image",
                       description="Analyse one polished-section image: phase map, fractions "
                       "with confidence, particles, effective properties, bounds, report.")
    p.add_argument("image", help="image file (TIFF, PNG, JPEG, BMP), or a folder of slices with "
                   "--stack")
    p.add_argument("--config", help="run configuration (TOML)")
    p.add_argument("--out", default="polisect-out", help="output folder (default: polisect-out)")
    p.add_argument("--json", metavar="FILE", help="also write the result JSON here ('-' = stdout)")
    p.add_argument("--classes", type=int, help="number of grey-level classes (multi-Otsu)")
    p.add_argument("--assign", help="materials per class, e.g. 0=air,1=alumina,2=zirconia")
    p.add_argument("--pixel-size", type=float, metavar="UM", help="pixel size in µm")
    p.add_argument("--kind", choices=("grayscale", "labels", "palette"), help="[image] kind")
    p.add_argument("--crop-bottom", metavar="N|auto|0",
                   help="rows of the microscope's information band to cut from the bottom: a "
                        "number, auto (find it; the default) or 0 (keep every row)")
    p.add_argument("--quiet", action="store_true",
                   help="no progress messages while it runs; the result summary (fractions, "
                        "properties, warnings, where the outputs are) is still printed")
    p.add_argument("--verify", action="store_true",
                   help="solve again with the second method (fe for fft) and state their "
                        "largest relative difference ([solve] verify)")
    _add_window_options(p)
    _add_3d_options(p)
    p.set_defaults(run=_run_analyze)


def _add_3d_options(p) -> None:
    p.add_argument("--stack", action="store_true",
                   help="IMAGE is a folder of slice images, read as one 3D volume")
    p.add_argument("--estimate-3d", action="store_true",
                   help="also estimate the 3D properties from the section's statistics "
                        "(reconstructed sphere packings; [solve] estimate_3d)")
    p.add_argument("--voxels", type=_whole(16), metavar="N",
                   help="voxels per edge of each 3D reconstruction (default 160)")
    p.add_argument("--realizations", type=_whole(1), metavar="N",
                   help="number of 3D reconstructions (default 3)")


def _whole(least: int):
    """argparse type: a whole number of at least *least*."""
    def parse(text: str) -> int:
        try:
            value = int(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"{text!r} is not a whole number") from None
        if value < least:
            raise argparse.ArgumentTypeError(f"{value} is below the smallest allowed, {least}")
        return value
    return parse


def _with_3d_options(cfg, args):
    """The config with --stack, --estimate-3d, --voxels and --realizations applied."""
    if args.stack:
        if not os.path.isdir(args.image):
            raise InputError(f"{args.image}: --stack reads a folder of slice images, and this "
                             "is not a folder (give a multi-page TIFF without --stack)")
        cfg = dataclasses.replace(cfg, image=dataclasses.replace(cfg.image, volume=True))
    given = {"estimate_3d": True if args.estimate_3d else None, "voxels": args.voxels,
             "realizations": args.realizations,
             "verify": True if getattr(args, "verify", False) else None}
    given = {k: v for k, v in given.items() if v is not None}
    if given:
        cfg = dataclasses.replace(cfg, solve=dataclasses.replace(cfg.solve, **given))
    return cfg


def _add_window_options(p) -> None:
    p.add_argument("--windows", action="store_true",
                   help="window-size study: is the image big enough? (integral range, "
                        "supported error, required size)")
    p.add_argument("--target-error", metavar="PCT",
                   help="target relative error at 95 %% for the required size, e.g. 2%% "
                        "(default 5%%; implies --windows)")
    p.add_argument("--edges", choices=("periodic", "mirror"),
                   help="window boundary for the effective properties: periodic (default) "
                        "or mirrored windows (implies --windows)")


def _with_window_options(cfg, args):
    """The configuration with the window-study options of the command line."""
    if not (args.windows or args.target_error or args.edges):
        return cfg
    win = cfg.windows
    win = dataclasses.replace(win, study=True, edges=args.edges or win.edges,
                              target_error=(parse_target_error(args.target_error)
                                            if args.target_error else win.target_error))
    return dataclasses.replace(cfg, windows=win)


def parse_target_error(text: str) -> float:
    """``"2%"`` or ``"0.02"`` → 0.02.

    Examples
    --------
    >>> parse_target_error("2%"), parse_target_error("0.05")
    (0.02, 0.05)
    """
    s = str(text).strip()
    try:
        value = float(s[:-1]) / 100.0 if s.endswith("%") else float(s)
    except ValueError:
        raise InputError(f"--target-error {text!r}: give a percentage such as 2% or a "
                         "fraction such as 0.02") from None
    if not 0.0 < value < 1.0:
        raise InputError(f"--target-error {text!r} must be between 0 and 100 %")
    return value


def _run_analyze(args) -> int:
    from ..present.record import to_json
    from ..properties.solve import progress as solver_progress
    from .run import run_section

    progress = _Progress(args.quiet)
    cfg = _with_window_options(_with_3d_options(_config(args), args), args)
    try:
        with solver_progress.observe(progress.solver):
            analysis, paths = run_section(args.image, cfg, args.out,
                                          pixel_size_um=args.pixel_size, progress=progress)
    except InputError as exc:
        if str(args.image) in str(exc) or str(args.out) in str(exc):
            raise
        raise InputError(f"{args.image}: {exc}") from None
    _emit_json(args.json, to_json(analysis.result))
    _summary(analysis.result, paths)
    return EXIT_OK


def _config(args):
    """The run configuration of --config with the quick options applied."""
    from ..read.config import load_config, quick_config

    cfg = load_config(args.config) if args.config else None
    if any(v is not None for v in (args.classes, args.assign, args.kind)) or cfg is None:
        cfg = quick_config(classes=args.classes, assign=args.assign, kind=args.kind, base=cfg)
    crop = getattr(args, "crop_bottom", None)
    if crop is not None:
        rows = crop.strip().lower()
        if rows != "auto" and not rows.isdigit():
            raise InputError(f"--crop-bottom {crop!r}: give a number of rows, auto or 0")
        cfg = dataclasses.replace(cfg, image=dataclasses.replace(
            cfg.image, crop_bottom_px="auto" if rows == "auto" else int(rows)))
    return cfg


def _summary(result, paths) -> None:
    """The result in a few lines on stderr (printed with and without --quiet)."""
    from ..present.figures import field_size
    from ..present.units import number

    src = result.source
    lines = [f"{src.path}: {' × '.join(map(str, src.shape))} px, "
             f"{field_size(src.shape, src.pixel_size_um)}"]
    if src.cropped_bottom_px:
        lines.append(f"  information band: {src.cropped_bottom_px} rows cut at the bottom "
                     "before the analysis")
    for p in result.phases:
        lo, hi = p.fraction_ci95
        lines.append(f"  {p.name:<18} fraction {p.fraction:.4f}  (95 % {lo:.4f}–{hi:.4f})")
        if p.inside_particles:
            lines.append(f"  {'':<18}   of which {p.inside_particles:.4f} inside particles "
                         f"(cores), {max(0.0, p.fraction - p.inside_particles):.4f} open")
    lines += _summary_model(result.effective, "")
    if result.effective is None:
        skipped = [n for n in result.notes if n.startswith("no materials assigned")]
        if skipped:
            lines.append("  properties: skipped, no materials assigned to the phases; give "
                         "--assign LABEL=MATERIAL,... (e.g. --assign 0=air,1=alumina) or "
                         "[[phase]] entries in --config")
    v = result.verification
    if v is not None:
        where = "whole map" if v.crop is None else f"{' × '.join(map(str, v.crop))} crop"
        lines.append(f"  second solver ({v.second_method} vs {v.method}, {where}): largest "
                     f"relative difference {number(v.max_relative_difference, 2)}")
    if result.effective_3d:
        lines += _summary_model(result.effective_3d.effective, "3D ")
    for w in result.warnings:
        lines.append(f"  warning: {w}")
    if result.windows:
        lines.append(f"  window study: {result.windows.verdict}")
    lines.append(f"  report: {paths.report}")
    lines.append(f"  json:   {paths.json}")
    print("\n".join(lines), file=sys.stderr)


def _summary_model(eff, prefix: str) -> list[str]:
    """Lines for one model's effective properties, with the 95 % interval over the
    realizations of a 3D estimate."""
    from ..present.units import number, scale_of, unit_text, with_unit
    from ..properties.records import Spread, value_of

    if eff is None:
        return []

    def show(x, kind):
        sc = scale_of(kind)
        value = number(value_of(x) * sc, trim=False)
        if isinstance(x, Spread) and x.ci95:
            value += (f" (95 % {number(x.ci95[0] * sc, trim=False)}–"
                      f"{number(x.ci95[1] * sc, trim=False)})")
        return with_unit(value, unit_text(kind))

    lines = []
    if eff.conductivity:
        k = show(eff.conductivity.mean, "conductivity")
        lines.append(f"  {prefix + 'conductivity':<17} {k}")
    if eff.elasticity:
        el = eff.elasticity
        label = prefix + "Young's modulus"
        lines.append(f"  {label:<17} {show(el.youngs_modulus, 'modulus')}, "
                     f"Poisson's ratio {value_of(el.poisson_ratio):.3f}")
    if eff.expansion:
        lines.append(f"  {prefix + 'expansion':<17} {show(eff.expansion.mean, 'expansion')}")
    if lines:
        lines.append(f"  ({eff.model})")
    return lines


def _emit_json(target, text) -> None:
    if not target:
        return
    if target == "-":
        sys.stdout.write(text + "\n")
    else:
        from ..core.atomic import atomic_write_text
        atomic_write_text(target, text + "\n")


def _add_demo(sub):
    p = sub.add_parser("demo", help="run the built-in demo sections",
                       description="Analyse the built-in demo sections (a fictional supplier's "
                       "two product lines) and write their reports.")
    p.add_argument("--out", default="polisect-demo",
                   help="output folder (default: polisect-demo in the current folder; the "
                        "full path is printed first)")
    p.add_argument("--quiet", action="store_true",
                   help="no progress messages; the summary is still printed")
    p.set_defaults(run=_run_demo)


def _run_demo(args) -> int:
    from ..present.units import show
    from .demo import run_demo

    progress = _Progress(args.quiet)
    print(f"Writing the demo into {os.path.abspath(args.out)} (choose with --out)",
          file=sys.stderr, flush=True)
    written = [(d.title, d.row, d.report) for d in run_demo(args.out, progress=progress)]
    print("Demo: sections of the fictional Kestrel Foundry Supply's two product lines")
    print("(2D sections solved as prismatic structures, generalized plane strain)\n")
    for title, row, report in written:
        fractions = ", ".join(
            f"{k[len('fraction_'):]} {v:.3f}"
            + (f" ± {row[k + '_u95']:.3f}" if row.get(k + "_u95") is not None else "")
            for k, v in row.items()
            if k.startswith("fraction_") and not k.endswith(("_low", "_high", "_u95")))
        print(f"  {title}")
        print(f"    fractions: {fractions}")
        print(f"    k = {show(row.get('conductivity_W_mK'), 'conductivity')},  "
              f"E = {show(row.get('youngs_modulus_GPa'), 'modulus')},  "
              f"α = {show(row.get('expansion_per_K'), 'expansion')}")
        print(f"    report: {os.path.abspath(report)}")
    print(f"\nAll outputs: {os.path.abspath(args.out)}")
    print("Estimates for screening and comparison, not design values; verify by measurement.")
    return EXIT_OK


def _add_materials(sub):
    p = sub.add_parser("materials", help="list the built-in material library",
                       description="The material library: values at 20 °C, or one "
                       "material's tables over temperature with their sources.")
    p.add_argument("--json", action="store_true", help="print the library as JSON")
    p.add_argument("--show", metavar="NAME",
                   help="print one material's tables over temperature with their sources")
    p.add_argument("--file", metavar="TOML",
                   help="a lab's own grades in the library's format, merged over the library")
    p.set_defaults(run=_run_materials)


def _run_materials(args) -> int:
    from ..core.materials import (describe_library, describe_material, get_material,
                                  library, load_library_file)

    lib = load_library_file(args.file) if args.file else library()
    if args.show:
        material = get_material(args.show, lib)
        if args.json:
            print(json.dumps({**material.to_dict(), "tables": material.tables_dict()},
                             indent=2))
        else:
            print(describe_material(material))
    elif args.json:
        print(json.dumps({k: {**m.to_dict(), "tables": m.tables_dict()} for k, m in lib.items()},
                         indent=2))
    else:
        print(describe_library(lib))
    return EXIT_OK


def _add_estimate(sub):
    p = sub.add_parser("estimate", help="bounds and mean-field estimates without an image",
                       description="Analytical bounds and mean-field estimates from phase "
                       "fractions alone.")
    p.add_argument("--phase", action="append", required=True, metavar="SPEC",
                   help="NAME:FRACTION (library material) or NAME:FRACTION:k=..,E=..,nu=..,"
                        "alpha=.. ; repeat for every phase")
    p.add_argument("--matrix", help="the matrix phase for Mori–Tanaka (default: largest)")
    p.add_argument("--2d", dest="two_d", action="store_true",
                   help="2D: circular cylinders, transverse plane")
    p.add_argument("--hollow", action="append", default=[], metavar="NAME:RATIO",
                   help="an inclusion phase is hollow with this inner/outer diameter ratio")
    p.add_argument("--json", metavar="FILE", help="write JSON here ('-' = stdout)")
    p.set_defaults(run=_run_estimate)


def _run_estimate(args) -> int:
    from .estimate import run_estimate

    text = run_estimate(args.phase, args.matrix, args.two_d, args.hollow, args.json)
    if text:
        print(text)
    return EXIT_OK


BENCH_COLUMNS = """\
columns of the table:
  method     fft = FFT-preconditioned conjugate gradients on the pixel-element system;
             fe  = the same system assembled, algebraic-multigrid-preconditioned CG;
             ms  = Moulinec-Suquet basic scheme (a reference; refuses pores)
  iter       iterations to the tolerance; s/iter seconds per iteration
  fft floor  time of the FFTs one iteration needs (the least an FFT method can take);
             ratio = s/iter over that floor
  peak MB    peak traced Python memory; RSS MB the process's resident set
  conv       'yes' when the solver reached its tolerance; 'no' when it stopped at an
             iteration cap: the ms rows run a fixed budget of iterations on purpose (the
             basic scheme converges slowly at high contrast), so 'no' there is expected
  N^x        on the last scaling row (case f): seconds grow as (pixel count)^x over the
             sizes (the kernels are compiled before the first size is timed)
A progress line goes to stderr as each case starts and ends.
--quick runs small sizes (a smoke run; expect a minute or two on two cores)."""
"""The bench table's columns in words (``polisect bench --help``)."""


def _add_bench(sub):
    p = sub.add_parser("bench", help="measure solver and analysis speed",
                       formatter_class=argparse.RawDescriptionHelpFormatter,
                       description="Benchmarks: prints a table of iterations, seconds, the FFT "
                       "floor and peak memory per case.",
                       epilog=BENCH_COLUMNS)
    p.add_argument("--json", metavar="FILE", help="write the figures as JSON")
    p.add_argument("--quick", action="store_true", help="small sizes (a smoke run)")
    p.add_argument("--cases", metavar="LETTERS",
                   help="run only these cases, e.g. 'ab' or 'e' (default: all, a–l)")
    p.set_defaults(run=_run_bench)


def _run_bench(args) -> int:
    from .bench import format_table, run_bench

    rows = run_bench(quick=args.quick, json_path=args.json, cases=args.cases,
                     say=lambda line: print(line, file=sys.stderr, flush=True))
    print(format_table(rows))
    return EXIT_OK


def _add_serve(sub):
    p = sub.add_parser("serve", help="the drop-in web page on this computer",
                       description="Start a local web page: drop a section image, check the "
                       "phase map, assign materials, run, read and download the report.")
    p.add_argument("--port", type=int, default=8765, help="port (default 8765; 0 = any free)")
    p.add_argument("--host", default="127.0.0.1",
                   help="address to listen on (default 127.0.0.1, this computer only; the "
                        "page has no login)")
    p.add_argument("--out", default="polisect-runs",
                   help="output folder, one sub-folder per run (default: polisect-runs)")
    p.add_argument("--max-upload-mb", type=float, default=200.0, metavar="MB",
                   help="largest image accepted, MB (default 200)")
    p.add_argument("--jobs", type=int, default=1,
                   help="runs computed at the same time (default 1; more wait in a queue)")
    p.add_argument("--open", action="store_true", help="open the page in the web browser")
    p.add_argument("--verbose", action="store_true", help="log every request")
    p.set_defaults(run=_run_serve)


def _run_serve(args) -> int:
    from .serve import serve

    serve(host=args.host, port=args.port, out_dir=args.out, max_upload_mb=args.max_upload_mb,
          parallel_runs=args.jobs, open_browser=args.open, verbose=args.verbose)
    return EXIT_OK


def _add_batch(sub):
    p = sub.add_parser("batch", help="analyse every image of a folder",
                       description="Analyse every image under a folder (recursively) in "
                       "parallel; survives bad files and kills (--resume), writes summary.csv, "
                       "failures.csv, index.html and a manifest.")
    p.add_argument("folder", help="folder holding the images (searched recursively)")
    p.add_argument("--config", help="run configuration (TOML) for every image")
    p.add_argument("--out", default="polisect-batch", help="output folder (default: "
                   "polisect-batch)")
    p.add_argument("--pattern", default="*.tif", help="file-name pattern(s), comma-separated, "
                   "case-insensitive (default: *.tif)")
    p.add_argument("--jobs", type=int, default=1, help="worker processes (default 1)")
    p.add_argument("--scheduler", metavar="ADDRESS", help="run on a Dask distributed "
                   "scheduler, e.g. tcp://host:8786 (needs polisect[dask])")
    p.add_argument("--resume", action="store_true", help="keep what a previous run into --out "
                   "finished; redo changed images or a changed config")
    p.add_argument("--group-by", metavar="folder|REGEX", help="batches by folder (default) or "
                   "by a regex with (?P<batch>...) on the file name")
    p.add_argument("--classes", type=int, help="number of grey-level classes (multi-Otsu)")
    p.add_argument("--assign", help="materials per class, e.g. 0=air,1=alumina,2=zirconia")
    p.add_argument("--pixel-size", type=float, metavar="UM", help="pixel size in µm")
    p.add_argument("--kind", choices=("grayscale", "labels", "palette"), help="[image] kind")
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    _add_window_options(p)
    p.set_defaults(run=_run_batch)


def _run_batch(args) -> int:
    from .batch import run_batch
    from .measured import measured_lines

    cfg = _with_window_options(_config(args), args)
    r = run_batch(args.folder, args.out, config=cfg, pattern=args.pattern, jobs=args.jobs,
                  scheduler=args.scheduler, resume=args.resume, group_by=args.group_by,
                  pixel_size_um=args.pixel_size, quiet=args.quiet)
    for note in r.notes:
        print(f"polisect: note: {note}", file=sys.stderr)
    if not args.quiet:
        print(f"{r.done} of {r.total} images done ({r.skipped} from before), {r.failed} "
              f"failed, {r.seconds:.1f} s\n  index:    {r.index_html}\n  summary:  "
              f"{r.summary_csv}\n  failures: {r.failures_csv}", file=sys.stderr)
    if r.measured:
        print("measured values beside the batch means (batch mean [95 % interval]; z in "
              f"combined standard uncertainties; also in {r.measured_csv} and the index):\n"
              + "\n".join(f"  {line}" for line in measured_lines(r.measured)), file=sys.stderr)
    return EXIT_OK


def _add_compare(sub):
    p = sub.add_parser("compare", help="compare sections and batches",
                       description="Statistics of the sections of each batch (mean, 95 % "
                       "interval, %RA), Grubbs outliers, Welch's t-test / ANOVA between "
                       "batches, heterogeneity against the window studies, as HTML and JSON.")
    p.add_argument("dirs", nargs="+", metavar="DIR", help="folders written by polisect batch "
                   "(or holding result JSON files)")
    p.add_argument("--group-by", metavar="dir|folder|REGEX", help="batches: as recorded by "
                   "polisect batch (default), each DIR (dir), the image folder (folder), or a "
                   "regex with (?P<batch>...) on the image file name")
    p.add_argument("--out", metavar="FILE.html", default="comparison.html",
                   help="HTML page to write (default: comparison.html)")
    p.add_argument("--json", metavar="FILE", help="also write the comparison as JSON "
                   "('-' = stdout)")
    p.add_argument("--spec", action="append", default=[], metavar="LIMIT",
                   help="a specification limit checked per batch and section, e.g. "
                        "--spec 'porosity<=0.22' --spec 'k>=1.8' (names: porosity, a phase "
                        "name, k, E, nu, K, G, alpha in 10⁻⁶/K, or a summary.csv column; "
                        "fractions as 0.22 or 22%%); repeat for more")
    p.add_argument("--quiet", action="store_true",
                   help="print only the batch means, the specification verdicts and where "
                        "the page is, not the findings")
    p.set_defaults(run=_run_compare)


def _run_compare(args) -> int:
    from .compare import compare, load_sections, means_lines, spec_lines, write_html
    from .measured import measured_lines

    comparison = compare(load_sections(args.dirs, args.group_by), specs=args.spec)
    write_html(comparison, args.out)
    _emit_json(args.json, comparison.to_json())
    lines = [f"{len(comparison.sections)} sections in {len(comparison.batches)} batch(es): "
             + ", ".join(comparison.batches),
             "batch means (± = 95 % interval of the mean):"]
    lines += [f"  {s}" for s in means_lines(comparison)]
    if comparison.measured:
        lines.append("measured beside computed (batch mean [95 % interval]; z in combined "
                     "standard uncertainties):")
        lines += [f"  {s}" for s in measured_lines(comparison.measured)]
    if comparison.specs:
        lines.append("specification limits (pass: the whole interval meets the limit):")
        lines += [f"  {s}" for s in spec_lines(comparison)]
    if not args.quiet:
        lines.append("findings (fractions in percentage points, other quantities in % of the "
                     "first batch; ± = 95 % interval), significant first:")
        groups = comparison.grouped()
        if not groups:
            lines.append("  none: a test between batches needs at least two sections in each "
                         "of two batches")
        for q in groups:
            mark = ("differs between batches" if q.significant
                    else "no significant difference between batches")
            if q.outliers:
                mark += f", {len(q.outliers)} outlier section(s)"
            lines.append(f"  {q.label} — {mark}")
            lines += [f"    {s}" for s in q.sentences]
    lines.append(f"page: {os.path.abspath(args.out)}")
    print("\n".join(lines), file=sys.stderr)
    return EXIT_OK


def _add_train(sub):
    p = sub.add_parser("train", help="train a segmenter on images painted with strokes",
                       description="Train a pixel classifier (random forest on multiscale "
                       "features) on one or more images with annotation strokes, and write it "
                       "as a model file for [segment] method = \"trained\", model = FILE.")
    p.add_argument("images", nargs="+", metavar="IMAGE", help="section images")
    p.add_argument("--annotations", nargs="+", required=True, metavar="FILE",
                   help="one strokes image per image: 0 = not annotated, v = phase label "
                        "v − 1 (label 0 is painted 1)")
    p.add_argument("--config", metavar="TOML", help="run config: its [image] crop and "
                   "[segment] corrections are applied as in analyze")
    p.add_argument("--out", required=True, metavar="MODEL.npz", help="model file to write")
    p.add_argument("--crop-bottom", metavar="N|auto|0",
                   help="rows of an information band to cut (default: auto-detect)")
    p.set_defaults(run=_run_train)


def _run_train(args) -> int:
    from ..read.config import Config, load_config
    from ..read.image import read_annotations, read_image, to_grayscale
    from ..segment import train_segmenter

    if len(args.annotations) != len(args.images):
        raise InputError(f"give one --annotations file per image ({len(args.images)} images, "
                         f"{len(args.annotations)} annotation files)")
    cfg = load_config(args.config) if args.config else Config()
    crop = cfg.image.crop_bottom_px
    if args.crop_bottom is not None:
        crop = "auto" if args.crop_bottom == "auto" else _train_rows(args.crop_bottom)
    images, annotations = [], []
    for path, ann in zip(args.images, args.annotations):
        micro = read_image(path, crop_bottom_px=crop)
        images.append(to_grayscale(micro.data) if micro.is_rgb else micro.data)
        annotations.append(read_annotations(ann, micro))
    model = train_segmenter(images, annotations, cfg.segment,
                            names=[os.path.basename(p) for p in args.images])
    model.save(args.out)
    print(f"wrote {args.out}: labels {list(model.labels)}, {model.source}")
    return EXIT_OK


def _train_rows(text):
    if not text.isdigit():
        raise InputError(f"--crop-bottom {text!r}: give a number of rows ≥ 0, auto or 0")
    return int(text)


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="polisect",
        description="Polished sections of composites to phase maps, particle statistics and "
                    "effective properties with bounds and confidence.")
    parser.add_argument("--version", action="version", version=f"polisect {__version__}")
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")
    for add in (_add_analyze, _add_batch, _add_compare, _add_demo, _add_materials,
                _add_estimate, _add_bench, _add_serve, _add_train):
        add(sub)
    parser.add_argument("--debug", action="store_true",
                        help="show the traceback of an internal error")
    for command in sub.choices.values():
        command.add_argument("--debug", action="store_true", default=argparse.SUPPRESS,
                             help="show the traceback of an internal error")
    return parser


def main(argv: list[str] | None = None) -> int:
    """Entry point of the ``polisect`` command.

    Every failure ends in one line on stderr: bad input, a missing file or a full disk exit
    2; an interrupt exits 130; a closed output pipe (``| head``) ends quietly; any other
    exception exits 1 with a pointer to ``--debug``, which shows its traceback.
    """
    debug = False
    try:
        parser = build_parser()
        args = parser.parse_args(argv)
        debug = args.debug
        code = args.run(args)
        sys.stdout.flush()  # a closed pipe shows here, not at interpreter exit
        return code
    except BrokenPipeError:
        try:  # no second error when Python flushes stdout at exit
            os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        except (OSError, ValueError):
            pass
        return EXIT_OK
    except KeyboardInterrupt:
        print("polisect: interrupted", file=sys.stderr)
        return 130
    except InputError as exc:
        print(f"polisect: error: {exc}", file=sys.stderr)
        return EXIT_INPUT
    except MemoryError:
        print("polisect: error: out of memory; crop the image, lower --voxels or ask for fewer "
              "[solve] properties", file=sys.stderr)
        return EXIT_INPUT
    except OSError as exc:
        if exc.errno == errno.ENOSPC:
            print(f"polisect: error: disk full writing {exc.filename or 'the outputs'}; free "
                  "some space or choose another --out", file=sys.stderr)
            return EXIT_INPUT
        if exc.filename is not None:
            print(f"polisect: error: {exc.filename}: {exc.strerror}; check the path and its "
                  "permissions", file=sys.stderr)
            return EXIT_INPUT
        return _internal(exc, debug)
    except Exception as exc:  # noqa: BLE001 - the last line of defence: report and exit 1
        return _internal(exc, debug)


def _internal(exc: BaseException, debug: bool) -> int:
    """One line for an unexpected exception (its traceback with ``--debug``); exit 1."""
    if debug:
        traceback.print_exc()
    text = (str(exc).strip().splitlines() or [""])[0][:200]
    print(f"polisect: internal error: {type(exc).__name__}: {text}"
          + ("" if debug else " (run again with --debug for the traceback; please report it)"),
          file=sys.stderr)
    return EXIT_INTERNAL


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
