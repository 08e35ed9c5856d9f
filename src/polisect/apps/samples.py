"""The demo sections shipped with polisect (fictional Kestrel Foundry Supply scenario).

`sample_files` lists them; each comes with its true label map and the run config of its
product line. They are made by ``sample_images/make_samples.py`` (shipped as
``polisect.sample_images``) and found through `importlib.resources`, so they work after
a non-editable install too.

Examples
--------
>>> from polisect.apps.samples import sample_files
>>> [s.name for s in sample_files()][:2]
['amc_b1_s1', 'amc_b1_s2']
>>> sample_files()[0].config.name
'amc.toml'
"""

from __future__ import annotations

from dataclasses import dataclass
from importlib import resources
from pathlib import Path

__all__ = ["SampleSection", "sample_files", "demo_sections", "LINES"]

#: Product line → (config file, title).
LINES = {"amc": ("amc.toml", "Line A, brake-disc AMC (Al + SiC)"),
         "castable": ("castable.toml", "Line B, lightweight mullite castable")}


@dataclass(frozen=True)
class SampleSection:
    """One shipped demo section.

    Attributes
    ----------
    name : str
        File stem, e.g. ``'amc_b1_s2'`` (line, batch, section).
    line : str
        Product line: ``'amc'`` or ``'castable'``.
    title : str
        Human-readable name for progress lines and reports.
    image, truth, config : pathlib.Path
        The rendered micrograph (TIFF with resolution tags), its true label map and the
        line's run config (TOML).
    """

    name: str
    line: str
    title: str
    image: Path
    truth: Path
    config: Path

    @property
    def group(self) -> str:
        """Output sub-folder for this section: its product line."""
        return self.line


def _folder() -> Path:
    return Path(str(resources.files("polisect.sample_images")))


def sample_files() -> list[SampleSection]:
    """Every shipped demo section, sorted by name."""
    folder = _folder()
    out = []
    for image in sorted(folder.glob("*_s[0-9].tif")):
        line, batch, section = image.stem.split("_")
        config, title = LINES[line]
        out.append(SampleSection(
            name=image.stem, line=line,
            title=f"{title}, batch {batch[1:]}, section {section[1:]}", image=image,
            truth=image.with_name(image.stem + "_truth.tif"), config=folder / config))
    return out


def demo_sections() -> list[SampleSection]:
    """The sections `polisect demo` analyses: all shipped ones."""
    return sample_files()
