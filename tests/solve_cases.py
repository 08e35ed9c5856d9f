"""Test microstructures and closed-form references shared by the tests of polisect.properties.solve."""

import numpy as np
from scipy import ndimage

from polisect import Material
from polisect.core import tensors as T


def blobs(shape, fractions, sigma, seed=0):
    """Periodic random blobs: smoothed noise cut at quantiles; phase i has fractions[i]."""
    rng = np.random.default_rng(seed)
    g = ndimage.gaussian_filter(rng.random(shape), sigma, mode="wrap")
    cuts = np.quantile(g, np.cumsum(fractions)[:-1])
    return np.searchsorted(cuts, g).astype(int)


def centred_disc(n, f):
    """One disc of area fraction ≈ f centred in an n×n cell (pixel centres inside the
    circle; square-symmetric). Use the pixel fraction ``labels.mean()``."""
    x = (np.arange(n) + 0.5) / n - 0.5
    return (x[:, None] ** 2 + x[None, :] ** 2 <= f / np.pi).astype(int)


def boolean_spheres(n, count, radius, seed=0, dim=3):
    """Overlapping spheres (discs) at uniform random centres, periodic (an isotropic model)."""
    rng = np.random.default_rng(seed)
    grid = np.indices((n,) * dim).reshape(dim, -1).T + 0.5
    inside = np.zeros(len(grid), dtype=bool)
    for c in rng.random((count, dim)) * n:
        d = np.abs(grid - c)
        d = np.minimum(d, n - d)
        inside |= np.sum(d ** 2, axis=1) <= radius ** 2
    return inside.reshape((n,) * dim).astype(int)


def perrins(f, km, kc):
    """Square array of discs: Perrins, McKenzie & McPhedran, Proc. R. Soc. Lond. A 369
    (1979) 207, as quoted in CHECKS.md."""
    t = (km + kc) / (km - kc)
    return km * (1 - 2 * f / (t + f - 0.305827 * f ** 4 * t / (t ** 2 - 1.402958 * f ** 8)
                              - 0.013362 * f ** 8))


def hs_conductivity(k1, k2, f2, dim):
    """Hashin–Shtrikman (1962) bounds, two phases, (lower, upper)."""
    def bound(ka, kb, fb):
        return ka + fb / (1.0 / (kb - ka) + (1 - fb) / (dim * ka))
    lo, hi = sorted([bound(k1, k2, f2), bound(k2, k1, 1 - f2)])
    return lo, hi


def hs_elastic(K1, G1, K2, G2, f2, dim):
    """Hashin–Shtrikman (1963) bounds on K and G in 3D; in 2D the bounds of Hashin, J. Mech.
    Phys. Solids 13 (1965) 119 on the plane-strain bulk modulus K₂ and the transverse G."""
    def bound(Ka, Ga, Kb, Gb, fb):
        fa = 1 - fb
        if dim == 3:
            K = Ka + fb / (1 / (Kb - Ka) + 3 * fa / (3 * Ka + 4 * Ga))
            G = Ga + fb / (1 / (Gb - Ga) + 6 * fa * (Ka + 2 * Ga) / (5 * Ga * (3 * Ka + 4 * Ga)))
        else:
            K = Ka + fb / (1 / (Kb - Ka) + fa / (Ka + Ga))
            G = Ga + fb / (1 / (Gb - Ga) + fa * (Ka + 2 * Ga) / (2 * Ga * (Ka + Ga)))
        return K, G
    a = bound(K1, G1, K2, G2, f2)
    b = bound(K2, G2, K1, G1, 1 - f2)
    return (min(a[0], b[0]), max(a[0], b[0])), (min(a[1], b[1]), max(a[1], b[1]))


def laminate(C, alpha, fractions, normal_set, tangential_set):
    """Stiffness and thermal expansion of a laminate of phases with Voigt stiffness C[p]
    and Voigt thermal strain alpha[p]: the strains of *tangential_set* and the stresses
    of *normal_set* are uniform (classical laminate theory; Backus, J. Geophys. Res. 67
    (1962) 4427, in the matrix form of Postma, Geophysics 20 (1955) 780)."""
    N, Tn = list(normal_set), list(tangential_set)
    f = np.asarray(fractions)
    inv_nn = [np.linalg.inv(c[np.ix_(N, N)]) for c in C]
    avg = lambda xs: sum(w * x for w, x in zip(f, xs))
    h = avg(inv_nn)
    hinv = np.linalg.inv(h)
    g = avg([i @ c[np.ix_(N, Tn)] for i, c in zip(inv_nn, C)])
    Cs = np.zeros_like(C[0])
    Cs[np.ix_(N, N)] = hinv
    Cs[np.ix_(N, Tn)] = hinv @ g
    Cs[np.ix_(Tn, N)] = (hinv @ g).T
    red = [c[np.ix_(Tn, Tn)] - c[np.ix_(Tn, N)] @ i @ c[np.ix_(N, Tn)] for c, i in zip(C, inv_nn)]
    Cs[np.ix_(Tn, Tn)] = avg(red) + g.T @ hinv @ g
    # free thermal strain: σ_N = 0 in every layer, ⟨σ_T⟩ = 0
    eps_t = np.linalg.solve(avg(red), avg([r @ a[Tn] for r, a in zip(red, alpha)]))
    eps_n = avg([a[N] - i @ c[np.ix_(N, Tn)] @ (eps_t - a[Tn])
                 for a, i, c in zip(alpha, inv_nn, C)])
    out = np.zeros(len(C[0]))
    out[N] = eps_n
    out[Tn] = eps_t
    return Cs, out


def iso_material(K, G, alpha=None, k=None):
    """Material from bulk and shear moduli (3D)."""
    E, nu = T.E_nu_from_bulk_shear(K, G)
    return Material(youngs_modulus=E, poisson_ratio=nu, expansion=alpha, conductivity=k)


PORE = Material(conductivity=0.0, youngs_modulus=0.0, name="pore")
