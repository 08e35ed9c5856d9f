"""Tests of polisect.read.image: reading micrographs, pixel size, information bands, bad files."""

import hashlib

import imageio.v3 as iio
import numpy as np
import pytest
import tifffile

from polisect.core.errors import InputError
from polisect.read.image import find_info_band, read_image, to_grayscale, write_tiff
from polisect.model3d.synth import render_sem, rsa_discs


@pytest.fixture
def grey():
    return np.random.default_rng(0).integers(0, 256, (40, 50)).astype(np.uint8)


def test_pixel_size_from_centimetre_tags(tmp_path, grey):
    """XResolution 20 000 px/cm → 0.5 µm (TIFF 6.0: ResolutionUnit 3 = centimetre)."""
    path = tmp_path / "cm.tif"
    tifffile.imwrite(path, grey, resolution=(20000, 20000), resolutionunit="CENTIMETER")
    m = read_image(path)
    assert m.pixel_size_um == pytest.approx(0.5, rel=1e-12)
    assert m.pixel_size_from == "tiff-tags"
    assert np.array_equal(m.data, grey)


def test_pixel_size_from_inch_tags(tmp_path, grey):
    """XResolution 12 700 px/inch → 2 µm (TIFF 6.0: ResolutionUnit 2 = inch = 25.4 mm)."""
    path = tmp_path / "inch.tif"
    tifffile.imwrite(path, grey, resolution=(12700, 12700), resolutionunit="INCH")
    assert read_image(path).pixel_size_um == pytest.approx(2.0, rel=1e-12)


def test_write_tiff_round_trip_both_units(tmp_path, grey):
    """write_tiff → read_image keeps the pixel size in either unit (TIFF 6.0)."""
    for unit in ("centimeter", "inch"):
        path = tmp_path / f"{unit}.tif"
        write_tiff(path, grey, pixel_size_um=0.37, unit=unit)
        with tifffile.TiffFile(path) as tif:
            assert int(tif.pages[0].tags["ResolutionUnit"].value) == (3 if unit == "centimeter"
                                                                      else 2)
        assert read_image(path).pixel_size_um == pytest.approx(0.37, rel=1e-6)


def test_pixel_size_from_imagej_unit(tmp_path, grey):
    """ImageJ: resolution in pixels per 'unit' given in the description (ImageJ hyperstack
    convention, from memory)."""
    path = tmp_path / "ij.tif"
    tifffile.imwrite(path, grey, imagej=True, resolution=(4, 4), metadata={"unit": "um"})
    assert read_image(path).pixel_size_um == pytest.approx(0.25)


def test_default_dpi_and_no_tags_are_unknown(tmp_path, grey):
    """72 dpi is a software default, not a calibration; no tags → unknown with a note."""
    a, b = tmp_path / "dpi.tif", tmp_path / "none.tif"
    tifffile.imwrite(a, grey, resolution=(72, 72), resolutionunit="INCH")
    tifffile.imwrite(b, grey)
    for path in (a, b):
        m = read_image(path)
        assert m.pixel_size_um is None and m.pixel_size_from == "unknown"
        assert any("pixel size unknown" in n for n in m.notes)
    assert any("72 dots per inch" in n for n in read_image(a).notes)


def test_given_pixel_size_precedence(tmp_path, grey):
    """Config value: a fallback when the tags say nothing; command line: overrides tags."""
    tagged, bare = tmp_path / "cm.tif", tmp_path / "bare.tif"
    write_tiff(tagged, grey, pixel_size_um=0.5)
    write_tiff(bare, grey)
    m = read_image(tagged, pixel_size_um=0.8, pixel_size_from="command line")
    assert m.pixel_size_um == 0.8 and m.pixel_size_from == "command line"
    assert any("0.5 µm" in n for n in m.notes)
    m = read_image(tagged, pixel_size_um=0.8, pixel_size_from="config")
    assert m.pixel_size_um == 0.5 and m.pixel_size_from == "tiff-tags"
    assert any("--pixel-size" in n for n in m.notes)
    m = read_image(bare, pixel_size_um=0.8, pixel_size_from="config")
    assert m.pixel_size_um == 0.8 and m.pixel_size_from == "config"
    with pytest.raises(InputError, match="positive"):
        read_image(tagged, pixel_size_um=-1.0)


def test_non_square_pixels(tmp_path, grey):
    path = tmp_path / "rect.tif"
    tifffile.imwrite(path, grey, resolution=(20000, 10000), resolutionunit="CENTIMETER")
    with pytest.raises(InputError, match="non-square"):
        read_image(path)
    assert read_image(path, pixel_size_um=0.5, pixel_size_from="command line").pixel_size_um == 0.5


@pytest.mark.parametrize("dtype", [np.uint16, np.int32, np.uint32, np.float32, np.float64])
def test_bit_depths(tmp_path, dtype):
    data = (np.random.default_rng(1).random((20, 30)) * 1000).astype(dtype)
    path = tmp_path / "deep.tif"
    tifffile.imwrite(path, data)
    m = read_image(path)
    assert m.data.dtype == dtype and np.array_equal(m.data, data)
    assert m.bit_depth == np.dtype(dtype).itemsize * 8 and m.dtype == np.dtype(dtype).name


def test_rgb_rgba_and_grey_as_rgb(tmp_path):
    rng = np.random.default_rng(2)
    rgb = rng.integers(0, 256, (20, 30, 3)).astype(np.uint8)
    rgba = np.dstack([rgb, np.full((20, 30), 255, np.uint8)])
    tifffile.imwrite(tmp_path / "rgb.tif", rgb, photometric="rgb")
    tifffile.imwrite(tmp_path / "rgba.tif", rgba, photometric="rgb")
    m = read_image(tmp_path / "rgb.tif")
    assert m.is_rgb and m.shape == (20, 30) and np.array_equal(m.data, rgb)
    m = read_image(tmp_path / "rgba.tif")
    assert m.is_rgb and np.array_equal(m.data, rgb)
    g = rgb[..., 0]
    tifffile.imwrite(tmp_path / "greyrgb.tif", np.dstack([g, g, g]), photometric="rgb")
    m = read_image(tmp_path / "greyrgb.tif")
    assert not m.is_rgb and np.array_equal(m.data, g)


def test_multipage_and_volume(tmp_path, grey):
    stack = np.stack([grey, grey // 2, grey // 3])
    path = tmp_path / "stack.tif"
    tifffile.imwrite(path, stack, photometric="minisblack")
    m = read_image(path)
    assert m.shape == grey.shape and np.array_equal(m.data, grey) and m.n_pages == 3
    assert any("3 pages" in n for n in m.notes)
    v = read_image(path, volume=True, crop_bottom_px=5)
    assert v.is_volume and v.shape == (3, 35, 50) and np.array_equal(v.data, stack[:, :35])
    one = tmp_path / "one.tif"
    tifffile.imwrite(one, grey)
    with pytest.raises(InputError, match="single image"):
        read_image(one, volume=True)


def test_png_jpeg_bmp_by_content(tmp_path, grey):
    """The format is found from the first bytes: a PNG named .tif is read as PNG."""
    iio.imwrite(tmp_path / "a.png", grey)
    iio.imwrite(tmp_path / "a.bmp", np.dstack([grey] * 3))
    iio.imwrite(tmp_path / "a.jpg", grey, quality=95)
    (tmp_path / "png_named.tif").write_bytes((tmp_path / "a.png").read_bytes())
    assert np.array_equal(read_image(tmp_path / "a.png").data, grey)
    assert np.array_equal(read_image(tmp_path / "png_named.tif").data, grey)
    assert np.array_equal(read_image(tmp_path / "a.bmp").data, grey)
    j = read_image(tmp_path / "a.jpg")
    assert j.shape == grey.shape and any("lossy" in n for n in j.notes)
    with pytest.raises(InputError, match="stack"):
        read_image(tmp_path / "a.png", volume=True)
    iio.imwrite(tmp_path / "b16.png", grey.astype(np.uint16) * 200)
    assert read_image(tmp_path / "b16.png").data.dtype == np.uint16


def test_sha256(tmp_path, grey):
    path = tmp_path / "a.tif"
    write_tiff(path, grey)
    assert read_image(path).sha256 == hashlib.sha256(path.read_bytes()).hexdigest()


def test_missing_file(tmp_path):
    with pytest.raises(InputError, match="no such file") as e:
        read_image(tmp_path / "nothere.tif")
    assert "nothere.tif" in str(e.value)


def test_zero_byte_file(tmp_path):
    path = tmp_path / "empty.tif"
    path.write_bytes(b"")
    with pytest.raises(InputError, match="empty"):
        read_image(path)


@pytest.mark.parametrize("compress", [False, True])
def test_truncated_tiff(tmp_path, compress):
    data = np.random.default_rng(3).integers(0, 256, (64, 64)).astype(np.uint8)
    full = tmp_path / "full.tif"
    write_tiff(full, data, compress=compress)
    cut = tmp_path / "cut.tif"
    raw = full.read_bytes()
    cut.write_bytes(raw[: len(raw) // 2])
    with pytest.raises(InputError, match="truncated") as e:
        read_image(cut)
    assert "cut.tif" in str(e.value)
    cut.write_bytes(raw[:12])
    with pytest.raises(InputError, match="truncated or damaged"):
        read_image(cut)


def test_text_file_named_tif(tmp_path):
    path = tmp_path / "notes.tif"
    path.write_text("sample 3, polished 2 min\n")
    with pytest.raises(InputError, match="text") as e:
        read_image(path)
    assert "notes.tif" in str(e.value) and ".tif" in str(e.value)


def test_one_by_one_image(tmp_path):
    path = tmp_path / "dot.tif"
    tifffile.imwrite(path, np.zeros((1, 1), np.uint8))
    with pytest.raises(InputError, match="1×1 pixels, too small"):
        read_image(path)


def test_nan_in_float_image(tmp_path):
    data = np.ones((10, 12), np.float32)
    data[3, 4] = np.nan
    path = tmp_path / "nan.tif"
    tifffile.imwrite(path, data)
    with pytest.raises(InputError, match="NaN") as e:
        read_image(path)
    assert "(3, 4)" in str(e.value)


def test_bad_crop_values(tmp_path, grey):
    path = tmp_path / "a.tif"
    write_tiff(path, grey)
    for bad in (-1, 1.5, "bottom", True):
        with pytest.raises(InputError, match="crop_bottom_px"):
            read_image(path, crop_bottom_px=bad)
    with pytest.raises(InputError, match="would leave"):
        read_image(path, crop_bottom_px=39)
    m = read_image(path, crop_bottom_px=10)
    assert m.shape == (30, 50) and m.cropped_bottom_px == 10


def test_auto_crop_finds_rendered_band(tmp_path):
    """The band render_sem appends is found exactly; its height is recorded."""
    p = rsa_discs((200, 160), 0.3, 6.0, seed=1)
    img = render_sem(p.labels, {0: 0.45, 1: 0.75}, seed=1, info_band_px=24)
    path = tmp_path / "band.tif"
    write_tiff(path, img)
    m = read_image(path, crop_bottom_px="auto")
    assert m.cropped_bottom_px == 24 and m.shape == (200, 160)
    assert np.array_equal(m.data, img[:200])
    assert any("24 rows" in n for n in m.notes)


def test_auto_crop_band_with_separator_line():
    """A bright one-row separator above a dark band is cut with the band."""
    rng = np.random.default_rng(4)
    img = rng.normal(120, 20, (120, 100))
    img[100:] = 10
    img[104:108, 5:60] = 240
    img[99] = 250
    assert find_info_band(img) == 21


@pytest.mark.parametrize("noise", [0.0, 0.02, 0.06])
def test_auto_crop_leaves_plain_sections_alone(noise):
    """No band: nothing cut, with or without noise, whatever the matrix share."""
    for seed in range(3):
        p = rsa_discs((160, 160), 0.25, 5.0, seed=seed)
        labels = p.labels.copy()
        labels[rsa_discs((160, 160), 0.03, 2.0, seed=seed + 10).labels == 1] = 2
        img = render_sem(labels, {0: 0.5, 1: 0.8, 2: 0.05}, noise_sd=noise, seed=seed)
        assert find_info_band(img) == 0
    assert find_info_band(np.full((20, 20), 7)) == 0


def test_auto_crop_note_when_nothing_found(tmp_path, grey):
    path = tmp_path / "a.tif"
    write_tiff(path, grey)
    m = read_image(path, crop_bottom_px="auto")
    assert m.cropped_bottom_px == 0 and any("no information band" in n for n in m.notes)


def test_to_grayscale_bt709():
    """Luma weights of ITU-R BT.709-6 item 3.2: 0.2126 R + 0.7152 G + 0.0722 B."""
    px = np.array([[[255, 0, 0], [0, 255, 0], [0, 0, 255], [10, 20, 30]]], np.uint8)
    y = to_grayscale(px)
    assert np.allclose(y, [[0.2126 * 255, 0.7152 * 255, 0.0722 * 255,
                            0.2126 * 10 + 0.7152 * 20 + 0.0722 * 30]])
    rgba = np.dstack([px, np.zeros((1, 4), np.uint8)])
    assert np.allclose(to_grayscale(rgba), y)
    g = np.arange(6).reshape(2, 3)
    assert to_grayscale(g) is g


def test_multipage_tiff_volume_round_trip(tmp_path):
    """A synthetic volume written as a multi-page TIFF reads back with its shape, voxel size
    and phase fractions (construction: lossless TIFF, resolution tags as TIFF 6.0 defines)."""
    from polisect.model3d.synth import rsa_spheres

    labels = rsa_spheres((24, 32, 40), 0.2, 4.0, seed=1, hollow_ratio=0.5).labels.astype(np.uint8)
    path = tmp_path / "volume.tif"
    write_tiff(path, labels, pixel_size_um=0.75)
    m = read_image(path, volume=True)
    assert m.shape == (24, 32, 40) and m.is_volume and m.n_pages == 24
    assert m.pixel_size_um == pytest.approx(0.75)
    for v in (0, 1, 2):
        assert (m.data == v).mean() == (labels == v).mean()


def test_read_stack_folder(tmp_path):
    """A folder of slices reads as one volume in natural name order, with its pixel size;
    other files are ignored with a note (construction)."""
    from polisect.read.image import read_stack

    rng = np.random.default_rng(0)
    vol = rng.integers(0, 4, (11, 16, 20)).astype(np.uint8)
    for k in range(11):
        write_tiff(tmp_path / f"slice_{k}.tif", vol[k], pixel_size_um=1.5)
    (tmp_path / "notes.txt").write_text("stage log")
    m = read_stack(tmp_path, slice_spacing_um=1.5)
    assert m.shape == (11, 16, 20) and np.array_equal(m.data, vol)
    assert m.pixel_size_um == pytest.approx(1.5) and m.n_pages == 11
    assert m.path == str(tmp_path)
    assert any("notes.txt" in n for n in m.notes) and any("cubic" in n for n in m.notes)
    again = read_stack(tmp_path)
    assert again.sha256 == m.sha256


def test_read_stack_bad_input(tmp_path):
    """Stack folders that cannot make a volume say why."""
    from polisect.read.image import read_stack

    with pytest.raises(InputError, match="not a folder"):
        read_stack(tmp_path / "missing")
    write_tiff(tmp_path / "a.tif", np.zeros((8, 8), np.uint8), pixel_size_um=1.0)
    with pytest.raises(InputError, match="at least"):
        read_stack(tmp_path)
    write_tiff(tmp_path / "b.tif", np.zeros((8, 9), np.uint8), pixel_size_um=1.0)
    with pytest.raises(InputError, match="same size"):
        read_stack(tmp_path)
    write_tiff(tmp_path / "b.tif", np.zeros((8, 8), np.uint8), pixel_size_um=1.0)
    with pytest.raises(InputError, match="cubic voxels"):
        read_stack(tmp_path, slice_spacing_um=2.0)
    (tmp_path / "c.tif").write_text("not an image")
    with pytest.raises(InputError, match="c.tif"):
        read_stack(tmp_path)


def test_huge_tiff_refused_before_decoding(tmp_path, monkeypatch):
    """Issue 17 probe: a 30000×30000 label TIFF (small on disk, compressed) is refused from its
    header, before any pixel is decoded (common practice, no source)."""
    import tifffile

    path = tmp_path / "huge.tif"
    tiles = (np.zeros((1024, 1024), np.uint8) for _ in range(30 * 30))
    tifffile.imwrite(path, tiles, shape=(30 * 1024, 30 * 1024), dtype=np.uint8,
                     tile=(1024, 1024), compression="zlib")
    assert path.stat().st_size < 20e6

    def no_decoding(*args, **kwargs):
        raise AssertionError("decoded")

    monkeypatch.setattr(tifffile.TiffPage, "asarray", no_decoding)
    with pytest.raises(InputError, match="pixels, more than the .* polisect reads; crop"):
        read_image(path)


def test_pixel_limit_applies_to_png_and_to_memory(tmp_path, monkeypatch):
    """Common practice (no source): PNG is checked from its header too, and an image that
    fits the limit but not the free memory is refused with the figure."""
    from polisect.core import memory

    path = tmp_path / "a.png"
    iio.imwrite(path, np.zeros((300, 200), np.uint8))
    monkeypatch.setattr(memory, "MAX_PIXELS", 50_000)
    with pytest.raises(InputError, match="60,000 pixels"):
        read_image(path)
    monkeypatch.setattr(memory, "MAX_PIXELS", 10 ** 9)
    monkeypatch.setattr(memory, "available_bytes", lambda: 1000)
    with pytest.raises(InputError, match="needs about .* of memory"):
        read_image(path)


def test_information_band_cut_by_default(tmp_path):
    """read_image cuts a detected information band unless told crop_bottom_px = 0 (issue
    14: the band is cut by default in every entry point); the rendered band has text."""
    from polisect.model3d.defects import Defects, render_micrograph
    from polisect.model3d.synth import rsa_discs

    labels = rsa_discs((200, 160), 0.3, 6.0, seed=1).labels
    r = render_micrograph(labels, {0: 0.3, 1: 0.7}, Defects(shading=0.3, noise_sd=0.1,
                                                             info_band_px=24), seed=2)
    path = tmp_path / "banded.tif"
    write_tiff(path, r.image)
    assert read_image(path).cropped_bottom_px == 24
    assert read_image(path, crop_bottom_px=0).cropped_bottom_px == 0
    plain = tmp_path / "plain.tif"
    write_tiff(plain, r.image[:200])
    assert read_image(plain).cropped_bottom_px == 0


def test_label_maps_have_no_band():
    """A label map whose bottom rows are one phase is not cut (it has few grey levels)."""
    labels = np.zeros((100, 80), np.uint8)
    labels[::7, ::5] = 1
    labels[90:] = 2
    labels[93:96, 10:40] = 1
    assert find_info_band(labels) == 0
