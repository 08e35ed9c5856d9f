"""Render the demo sections of the fictional Kestrel Foundry Supply scenario.

Kestrel Foundry Supply (a fictional company) qualifies two product lines, three batches
of four polished sections each:

* line A, ``amc``: a brake-disc aluminium-matrix composite with silicon carbide
  particles and a little gas porosity, imaged in backscattered electrons at 0.5 µm per
  pixel;
* line B, ``castable``: a lightweight mullite castable with hollow alumina spheres and
  pores, imaged in reflected light at 2 µm per pixel.

Usage::

    python sample_images/make_samples.py            # the shipped subset, into this folder
    python sample_images/make_samples.py --all DIR  # all 2 × 3 × 4 sections, into DIR

Each section is a TIFF with resolution tags (centimetres for line A, inches for line B),
``<name>_truth.tif`` beside it holds the true label map, and ``amc.toml`` and
``castable.toml`` are the run configs. Everything is periodic random sequential
addition (`polisect.model3d.synth.compose`) rendered with `polisect.model3d.synth.render_sem`,
except the hard sections (`HARD`), rendered with the defects of a real session by
`polisect.model3d.defects.render_micrograph`; the same command writes the same files.
"""

from __future__ import annotations

import argparse
import os
import sys
from dataclasses import dataclass

import numpy as np

from polisect.core.atomic import atomic_write_text
from polisect.read.image import write_tiff
from polisect.model3d.defects import Defects, render_micrograph
from polisect.model3d.synth import Inclusions, compose, render_sem

SHAPE = (512, 512)
#: The subset shipped in the package: (line, batch, section).
SHIPPED = (("amc", 1, 1), ("amc", 1, 2), ("castable", 1, 1), ("castable", 1, 2))
#: Sections rendered with an instrument information band (exercises crop_bottom_px = "auto").
WITH_BAND = {("amc", 1, 2), ("amc", 2, 2), ("amc", 3, 4)}
INFO_BAND_PX = 40
#: Hard sections: imaged on a bad day. Uneven illumination of ±30 %, noise of 25 grey levels
#: (σ), six polishing scratches and the information band (the acceptance case of the
#: segmentation, issue 14). The truth stays the rendered label map.
HARD = {("amc", 1, 2): Defects(blur_px=0.6, shading=0.30, noise_sd=25 / 255, scratches=6,
                               info_band_px=INFO_BAND_PX)}


@dataclass(frozen=True)
class Line:
    """How one product line looks: labels dark → bright, particle families per batch."""

    pixel_size_um: float
    tiff_unit: str
    grey: dict  # label -> grey level (fraction of full scale)
    blur_px: float
    noise_sd: float
    matrix_label: int
    batches: dict  # batch -> list of Inclusions


# Line A. Labels dark → bright in backscattered electrons: pores (0, no signal), SiC (1,
# mean atomic number 11.6), aluminium (2, Z = 13). SiC 24-27 % by area; pores 1.8-3.5 %.
AMC = Line(
    pixel_size_um=0.5, tiff_unit="centimeter", grey={0: 0.06, 1: 0.42, 2: 0.70},
    blur_px=0.6, noise_sd=0.045, matrix_label=2,
    batches={
        1: [Inclusions(1, 0.24, 10.0, size_sd=3.0, min_gap=1.5),
            Inclusions(0, 0.018, 5.0, size_sd=1.5, min_gap=1.5)],
        2: [Inclusions(1, 0.27, 10.0, size_sd=3.0, min_gap=1.5),
            Inclusions(0, 0.022, 5.0, size_sd=1.5, min_gap=1.5)],
        3: [Inclusions(1, 0.25, 11.0, size_sd=3.5, min_gap=1.5),
            Inclusions(0, 0.035, 5.5, size_sd=1.5, min_gap=1.5)],
    })

# Line B. Labels dark → bright in reflected light: pores and sphere cores (0), the fine,
# micro-porous mullite bond (1), the dense alumina shells (2). (In backscattered electrons
# alumina and mullite have almost the same mean atomic number, about 10.7, and would hardly
# differ.) Spheres 24-30 % by area with inner/outer diameter 0.62-0.68; pores 9-12 %.
CASTABLE = Line(
    pixel_size_um=2.0, tiff_unit="inch", grey={0: 0.05, 1: 0.45, 2: 0.80},
    blur_px=0.6, noise_sd=0.05, matrix_label=1,
    batches={
        1: [Inclusions(2, 0.26, 26.0, size_sd=7.0, hollow_ratio=0.65, core_label=0, min_gap=2.0),
            Inclusions(0, 0.09, 6.0, size_sd=2.5, min_gap=2.0)],
        2: [Inclusions(2, 0.30, 26.0, size_sd=7.0, hollow_ratio=0.62, core_label=0, min_gap=2.0),
            Inclusions(0, 0.11, 6.0, size_sd=2.5, min_gap=2.0)],
        3: [Inclusions(2, 0.24, 28.0, size_sd=7.0, hollow_ratio=0.68, core_label=0, min_gap=2.0),
            Inclusions(0, 0.12, 6.5, size_sd=2.5, min_gap=2.0)],
    })

LINES = {"amc": AMC, "castable": CASTABLE}

CONFIG_HEADERS = {
    "amc": """\
# Kestrel Foundry Supply (fictional), line A: brake-disc aluminium-matrix composite.
# Backscattered-electron sections at 0.5 µm per pixel (read from the TIFF resolution tags).
# Grey classes, dark to bright: 0 pores, 1 silicon carbide (mean Z 11.6), 2 aluminium (Z 13).
""",
    "castable": """\
# Kestrel Foundry Supply (fictional), line B: lightweight mullite castable with hollow
# alumina spheres. Reflected-light sections at 2 µm per pixel (TIFF resolution tags).
# Grey classes, dark to bright: 0 pores and sphere cores, 1 mullite bond (fine-grained,
# micro-porous, darker), 2 dense alumina sphere shells (brighter).
""",
}
#: Extra sections per line: invented service data of the demo (Hasselman's indices).
SERVICE = {"amc": "",
           "castable": """
# Demo service data (invented for the fictional scenario): strength and fracture energy of
# the castable, for Hasselman's comparative thermal-shock indices.
[service]
strength_MPa = 25.0
fracture_energy_J_m2 = 40.0
"""}
#: Extra lines of a [[phase]] entry, by (line, label): the castable's micro-porous bond.
PHASE_EXTRA = {("castable", 1): """# The bond is micro-porous below the 2 µm pixel: its dense mullite values are made porous
# with the Mori-Tanaka scheme for spherical pores before the image is solved (invented
# porosity for the fictional scenario).
porosity = 0.30
pore_shape = "spherical"
"""}
#: Extra lines of [solve], per line: the castable's service temperatures.
SOLVE_EXTRA = {"amc": "", "castable": """# The castable's service range: every phase at each temperature, radiation across the pores
# from 400 °C.
temperatures_C = [20, 600, 1200]
"""}
#: Invented measured values of the demo, per line.
MEASURED = {"amc": "", "castable": """
# Lab values of batch 1 (INVENTED for the fictional Kestrel Foundry Supply demo: not
# measurements of any real material).
[[measured]]
property = "conductivity"
value = 3.8
uncertainty = 0.3
temperature_C = 20
method = "laser flash (invented demo value)"

[[measured]]
property = "conductivity"
value = 2.6
uncertainty = 0.2
temperature_C = 600
method = "hot wire (invented demo value)"

[[measured]]
property = "youngs_modulus"
value = 80.0
uncertainty = 5.0
temperature_C = 20
method = "impulse excitation (invented demo value)"
"""}
#: [image] crop_bottom_px per line (TOML value).
CROP = {"amc": '"auto"   # the default: the microscope\'s information band is found and cut',
        "castable": '"auto"   # the default: the microscope\'s information band is found and cut'}
#: [[phase]] entries per line: (label, name, library material, particle statistics).
PHASES = {"amc": [(0, "pore", "air", True), (1, "SiC", "silicon-carbide", True),
                  (2, "aluminium", "aluminium", False)],
          "castable": [(0, "pore", "air", True), (1, "mullite", "mullite", False),
                       (2, "alumina", "alumina", True)]}


def config_text(line: str) -> str:
    """The run config (TOML) of one product line."""
    phases = "".join(f"""
[[phase]]
label = {label}
name = "{name}"
material = "{material}"
particles = {str(particles).lower()}
{PHASE_EXTRA.get((line, label), "")}""" for label, name, material, particles in PHASES[line])
    return f"""{CONFIG_HEADERS[line]}
[image]
kind = "grayscale"
crop_bottom_px = {CROP[line]}
# pixel_size_um = {LINES[line].pixel_size_um}   # only used for files without resolution tags

[segment]
method = "multi-otsu"
classes = 3
denoise = "median"
# denoise_px and min_feature_px are left at "auto": the filter radius follows the noise,
# the smallest feature the filter radius (the same rule in every entry point).
# Shading, speckle, scratches and stripes are corrected when found ("auto").
{phases}
[solve]
properties = ["conductivity", "elasticity", "expansion"]
method = "auto"
tolerance = 1e-6
plane = "generalized-plane-strain"
{SOLVE_EXTRA[line]}{SERVICE[line]}{MEASURED[line]}"""


def render_section(line: str, batch: int, section: int) -> tuple[np.ndarray, np.ndarray]:
    """The micrograph (uint8) and its true label map (uint8) of one section."""
    spec = LINES[line]
    seed = 10000 * (1 + list(LINES).index(line)) + 100 * batch + section
    rng = np.random.default_rng(seed)
    packing = compose(SHAPE, spec.batches[batch], seed=rng, matrix_label=spec.matrix_label)
    # each imaging session sets brightness and contrast a little differently
    offset, gain = rng.uniform(-0.02, 0.02), rng.uniform(0.95, 1.05)
    grey = {k: float(np.clip(offset + gain * v, 0, 1)) for k, v in spec.grey.items()}
    band = INFO_BAND_PX if (line, batch, section) in WITH_BAND else 0
    hard = HARD.get((line, batch, section))
    if hard is not None:
        image = render_micrograph(packing.labels, grey, hard, seed=rng).image
    else:
        image = render_sem(packing.labels, grey, blur_px=spec.blur_px, noise_sd=spec.noise_sd,
                           seed=rng, info_band_px=band)
    return image, packing.labels.astype(np.uint8)


def write_section(out_dir: str, line: str, batch: int, section: int) -> str:
    """Render one section and write it with its truth beside it; returns the image path."""
    image, truth = render_section(line, batch, section)
    spec = LINES[line]
    name = os.path.join(out_dir, f"{line}_b{batch}_s{section}")
    write_tiff(name + ".tif", image, pixel_size_um=spec.pixel_size_um, unit=spec.tiff_unit)
    write_tiff(name + "_truth.tif", truth, pixel_size_um=spec.pixel_size_um,
               unit=spec.tiff_unit, compress=True)
    return name + ".tif"


def write_configs(out_dir: str) -> None:
    for line in LINES:
        atomic_write_text(os.path.join(out_dir, f"{line}.toml"), config_text(line))


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--all", metavar="DIR",
                        help="write all 2 lines × 3 batches × 4 sections into DIR instead of "
                             "the shipped subset into this folder")
    args = parser.parse_args(argv)
    if args.all:
        out_dir = args.all
        todo = [(line, b, s) for line in LINES for b in (1, 2, 3) for s in (1, 2, 3, 4)]
    else:
        out_dir = os.path.dirname(os.path.abspath(__file__))
        todo = list(SHIPPED)
    os.makedirs(out_dir, exist_ok=True)
    write_configs(out_dir)
    for item in todo:
        print(write_section(out_dir, *item), file=sys.stderr)
    return 0


if __name__ == "__main__":
    sys.exit(main())
