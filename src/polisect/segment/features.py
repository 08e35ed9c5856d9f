"""Per-pixel features for trained segmentation: intensity, edges and texture at several scales.

Examples
--------
>>> import numpy as np
>>> from polisect.segment.features import pixel_features, FEATURE_SIGMAS
>>> pixel_features(np.zeros((32, 32), np.uint8)).shape
(32, 32, 20)
"""

from __future__ import annotations

import numpy as np

from ..core.errors import InputError

__all__ = ["pixel_features", "full_scale", "FEATURE_SIGMAS"]

#: Gaussian scales of the features, pixels (five octaves).
FEATURE_SIGMAS = (1.0, 16.0, 5)


def full_scale(dtype) -> float:
    """The grey level that means white for images stored as *dtype*: 255 for 8-bit,
    65535 for 16-bit, 1 for floating point (scaled images)."""
    dtype = np.dtype(dtype)
    if np.issubdtype(dtype, np.integer):
        return float(min(np.iinfo(dtype).max, 65535))
    return 1.0


def pixel_features(image: np.ndarray, *, scale: float | None = None) -> np.ndarray:
    """Multiscale intensity, edge and texture features of every pixel.

    At each Gaussian scale σ = 1, 2, 4, 8, 16 px the image (divided by *scale*) is
    smoothed, and four features are taken [1]_: the smoothed intensity, the gradient
    magnitude (edges) and the two eigenvalues of the Hessian (texture: ridges, valleys,
    blobs). Together they tell a bright pore edge from a bright phase and a grain of a
    second grey level from a particle, which a grey level alone cannot.

    Parameters
    ----------
    image : ndarray, shape (ny, nx)
        Grey image.
    scale : float, optional
        Grey level of white (default `full_scale` of the image's dtype).

    Returns
    -------
    ndarray of float32, shape (ny, nx, 20)

    Notes
    -----
    Cost grows linearly with the pixels; a 2048 × 2048 image needs 335 MB for the
    features and about 2.5 s on one core (measured, docs/methods.md).

    References
    ----------
    .. [1] van der Walt, S. et al. (2014). scikit-image: image processing in Python.
       PeerJ 2, e453 (`skimage.feature.multiscale_basic_features`).
    """
    from skimage.feature import multiscale_basic_features

    image = np.asarray(image)
    if image.ndim != 2:
        raise InputError(f"trained segmentation needs a 2D grey image, got shape {image.shape}")
    if scale is None:
        scale = full_scale(image.dtype)
    low, high, count = FEATURE_SIGMAS
    return multiscale_basic_features(image.astype(np.float32) / np.float32(scale),
                                     intensity=True, edges=True, texture=True,
                                     sigma_min=low, sigma_max=high, num_sigma=count,
                                     channel_axis=None).astype(np.float32, copy=False)
