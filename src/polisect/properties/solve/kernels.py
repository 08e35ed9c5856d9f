"""Compiled (numba) kernels: the matrix-free element operator and fused CG vector updates.

The operator evaluates the mode form of `solve.grid` one pixel line at a time: the
sums/differences across the other axes are formed on whole node lines, the last-axis
sums/differences and the per-phase term list act on contiguous line buffers (so the
compiler vectorises them), and the transposed steps scatter back into the four (3D) or
two (2D) node lines the pixel line touches. Each thread takes a contiguous block of
axis-0 planes and accumulates into two cache-sized plane buffers, writing every output
plane once (an earlier two-colour scheme updated each output line 2–4 times in memory).

Compile time. Every kernel is compiled once, as serial code that releases the GIL; large
arrays are cut into blocks that run in a pool of Python threads. Compiling numba
``parallel=True`` kernels plus a serial twin of each for small images took 45–60 s on
first use (the parfor passes over the whole loop nest); the serial kernels took ~9 s of
CPU for 2D and 3D together, 3.7 s of it for the formatting of the shape-mismatch message
that numba compiles with every array-to-array assignment (now written as loops) and 0.3 s
for a second layout of `fourier_multiply`; now 3.5 s (case (k) of `polisect bench`,
numba's compile events summed per kernel). Helpers are plain compiled functions, not
forced inline (forcing inline cost 4 s more compile for the 3D kernel and no run time,
measured).

Plain numpy needs 2–4× the time of the FFTs of one iteration for the operator alone
(measured on 1024² and 128³ grids); these kernels need 0.2–0.6× of it.
"""

from __future__ import annotations

import os
from concurrent.futures import ThreadPoolExecutor

import numba as nb
import numpy as np

_OPTS = dict(cache=True, fastmath=True, nogil=True)

PARALLEL_MIN = 1 << 19
"""Arrays with fewer elements run in the calling thread: handing work to the pool costs
~0.1 ms, more than the work below this size (measured crossovers of the former numba
threads: CG vector updates at ~2^19 elements, the 2D operator at ~600² pixels)."""


def threads() -> int:
    """Threads for the kernels and the transforms: ``POLISECT_THREADS`` when set (a batch
    worker sets it to cores ÷ jobs, so two jobs do not oversubscribe two cores), else every
    core. Read at each call, so a worker process that sets it after import is obeyed."""
    value = os.environ.get("POLISECT_THREADS", "")
    return int(value) if value.isdigit() and int(value) > 0 else (os.cpu_count() or 1)


_POOL: list = []


def _pool(count: int) -> ThreadPoolExecutor:
    """A shared pool of *count* Python threads (the kernels release the GIL)."""
    if not _POOL or _POOL[0]._max_workers != count:
        if _POOL:
            _POOL.pop().shutdown(wait=False)
        _POOL.append(ThreadPoolExecutor(max_workers=count,
                                        thread_name_prefix="polisect-kernel"))
    return _POOL[0]


class Kernel:
    """A compiled element-wise kernel that releases the GIL, run on slices of its array
    arguments along their last axis in the shared thread pool when the first argument has
    `PARALLEL_MIN` elements or more; the slices' return values are summed.

    *split* lists the positions of the arguments to slice (default: every array); an
    empty tuple keeps the kernel in the calling thread. No numba ``parallel`` variant:
    compiling a parallel twin of every kernel took most of the 45–60 s of the first run
    (measured). *signature* (numba's notation) makes the kernel compile that one variant on
    first use and no other: a slice of a multi-dimensional array along its last axis is not
    contiguous, so without it a kernel on such arrays compiles twice, for whole arrays
    (small images) and for slices (large ones); 0.3–0.4 s each (measured)."""

    def __init__(self, fn=None, *, split: tuple[int, ...] | None = None,
                 signature: str | None = None):
        self.split = split
        self.signature = signature
        if fn is not None:
            self._compile(fn)

    def _compile(self, fn):
        self.kernel = nb.njit(**_OPTS)(fn)
        self.__doc__ = fn.__doc__
        self.__name__ = fn.__name__
        return self

    def __call__(self, *args):
        if not hasattr(self, "kernel"):                     # used as @Kernel(split=...)
            return self._compile(args[0])
        if self.signature is not None and not self.kernel.signatures:
            self.kernel.compile(self.signature)
            self.kernel.disable_compile()
        count = threads()
        if args[0].size < PARALLEL_MIN or count == 1 or self.split == ():
            return self.kernel(*args)
        n = args[0].shape[-1]
        bounds = [(t * n // count, (t + 1) * n // count) for t in range(count)]
        cut = [isinstance(x, np.ndarray) if self.split is None else k in self.split
               for k, x in enumerate(args)]

        def part(bound):
            a, b = bound
            return self.kernel(*(x[..., a:b] if c else x for x, c in zip(args, cut)))

        results = list(_pool(count).map(part, bounds))
        return None if results[0] is None else sum(results)


@nb.njit(**_OPTS)
def _sum_diff(x, s, d, n):
    """Pixel line ← node line: ``s = x[k] + x[k+1]``, ``d = x[k+1] − x[k]`` (periodic)."""
    for k in range(n - 1):
        s[k] = x[k] + x[k + 1]
        d[k] = x[k + 1] - x[k]
    s[n - 1] = x[n - 1] + x[0]
    d[n - 1] = x[0] - x[n - 1]


@nb.njit(**_OPTS)
def _sum_diff_transpose(rs, rd, out, n):
    """Node line ← pixel lines: the transpose of `_sum_diff` applied to ``(rs, rd)``."""
    out[0] = rs[0] - rd[0] + rs[n - 1] + rd[n - 1]
    for k in range(1, n):
        out[k] = rs[k] - rd[k] + rs[k - 1] + rd[k - 1]


@nb.njit(**_OPTS)
def _terms(q, r, cl, start, cols, cid, n):
    """``r = M q`` on a pixel line, terms grouped by output row (``start``: row offsets
    into ``cols``/``cid``) and taken two at a time (fewer loads and stores of r, measured
    faster); returns the line's energy ``qᵀ M q``."""
    energy = 0.0
    for row in range(r.shape[0]):
        rr = r[row]
        t = start[row]
        end = start[row + 1]
        if t == end:
            rr[:] = 0.0
            continue
        c0 = cl[cid[t]]
        q0 = q[cols[t]]
        if t + 1 < end:
            c1 = cl[cid[t + 1]]
            q1 = q[cols[t + 1]]
            for k in range(n):
                rr[k] = c0[k] * q0[k] + c1[k] * q1[k]
            t += 2
        else:
            for k in range(n):
                rr[k] = c0[k] * q0[k]
            t += 1
        while t + 1 < end:
            c0 = cl[cid[t]]
            q0 = q[cols[t]]
            c1 = cl[cid[t + 1]]
            q1 = q[cols[t + 1]]
            for k in range(n):
                rr[k] += c0[k] * q0[k] + c1[k] * q1[k]
            t += 2
        if t < end:
            c0 = cl[cid[t]]
            q0 = q[cols[t]]
            for k in range(n):
                rr[k] += c0[k] * q0[k]
        qq = q[row]
        for k in range(n):
            energy += rr[k] * qq[k]
    return energy


@nb.njit(**_OPTS)
def _coefficients(cl, table, phase_line):
    """Coefficient lines of the pixel line whose phases are *phase_line*."""
    for k in range(phase_line.shape[0]):
        p = phase_line[k]
        for c in range(table.shape[0]):
            cl[c, k] = table[c, p]


@nb.njit(**_OPTS)
def _block_2d(u, labels, table, cid, start, cols, out, first, last, seam):
    """Pixel rows ``first … last−1`` of `apply_2d`; the contribution of the last row to
    the next node row goes to *seam* (nc, n1). Returns the block's energy."""
    nc, n0, n1 = u.shape
    line = np.empty((2, n1))
    q = np.empty((nc * 4, n1))
    r = np.empty((nc * 4, n1))
    cl = np.empty((table.shape[0], n1))
    cur = np.zeros((nc, n1))
    nxt = np.empty((nc, n1))
    energy = 0.0
    for i in range(first, last):
        i1 = i + 1 if i + 1 < n0 else 0
        _coefficients(cl, table, labels[i])
        for a in range(nc):
            u0 = u[a, i]
            u1 = u[a, i1]
            for k in range(n1):
                line[0, k] = u0[k] + u1[k]
                line[1, k] = u1[k] - u0[k]
            _sum_diff(line[0], q[4 * a], q[4 * a + 1], n1)
            _sum_diff(line[1], q[4 * a + 2], q[4 * a + 3], n1)
        energy += _terms(q, r, cl, start, cols, cid, n1)
        for a in range(nc):
            _sum_diff_transpose(r[4 * a], r[4 * a + 1], line[0], n1)
            _sum_diff_transpose(r[4 * a + 2], r[4 * a + 3], line[1], n1)
            o = out[a, i]
            c = cur[a]
            nx = nxt[a]
            for k in range(n1):
                o[k] = c[k] + line[0, k] - line[1, k]
                nx[k] = line[0, k] + line[1, k]
        cur, nxt = nxt, cur
    # copied in loops: numba's array-to-array assignment compiles the formatting of its
    # shape-mismatch message, 3.7 s of the first run (measured)
    for a in range(nc):
        for k in range(n1):
            seam[a, k] = cur[a, k]
    return energy


@nb.njit(**_OPTS)
def _block_3d(u, labels, table, cid, start, cols, out, first, last, seam):
    """Pixel planes ``first … last−1`` of `apply_3d`; the contribution of the last plane
    to the next node plane goes to *seam* (nc, n1, n2). Returns the block's energy."""
    nc, n0, n1, n2 = u.shape
    xy = np.empty((4, n2))
    q = np.empty((nc * 8, n2))
    r = np.empty((nc * 8, n2))
    cl = np.empty((table.shape[0], n2))
    cur = np.zeros((nc, n1, n2))
    nxt = np.empty((nc, n1, n2))
    energy = 0.0
    for i in range(first, last):
        i1 = i + 1 if i + 1 < n0 else 0
        nxt[:] = 0.0
        for j in range(n1):
            j1 = j + 1 if j + 1 < n1 else 0
            _coefficients(cl, table, labels[i, j])
            for a in range(nc):
                u00 = u[a, i, j]
                u01 = u[a, i, j1]
                u10 = u[a, i1, j]
                u11 = u[a, i1, j1]
                for k in range(n2):
                    s0 = u00[k] + u10[k]
                    d0 = u10[k] - u00[k]
                    s1 = u01[k] + u11[k]
                    d1 = u11[k] - u01[k]
                    xy[0, k] = s0 + s1
                    xy[1, k] = s1 - s0
                    xy[2, k] = d0 + d1
                    xy[3, k] = d1 - d0
                for b in range(4):
                    _sum_diff(xy[b], q[8 * a + 2 * b], q[8 * a + 2 * b + 1], n2)
            energy += _terms(q, r, cl, start, cols, cid, n2)
            for a in range(nc):
                for b in range(4):
                    _sum_diff_transpose(r[8 * a + 2 * b], r[8 * a + 2 * b + 1], xy[b], n2)
                c0 = cur[a, j]
                c1 = cur[a, j1]
                n0_ = nxt[a, j]
                n1_ = nxt[a, j1]
                for k in range(n2):
                    s0 = xy[0, k] - xy[1, k]
                    s1 = xy[0, k] + xy[1, k]
                    d0 = xy[2, k] - xy[3, k]
                    d1 = xy[2, k] + xy[3, k]
                    c0[k] += s0 - d0
                    n0_[k] += s0 + d0
                    c1[k] += s1 - d1
                    n1_[k] += s1 + d1
        for a in range(nc):                 # loops: see `_block_2d`
            for j in range(n1):
                o = out[a, i, j]
                c = cur[a, j]
                for k in range(n2):
                    o[k] = c[k]
        cur, nxt = nxt, cur
    for a in range(nc):
        for j in range(n1):
            s = seam[a, j]
            c = cur[a, j]
            for k in range(n2):
                s[k] = c[k]
    return energy


def _apply(block, u, labels, table, cid, start, cols, out, nchunks):
    """Run *block* on *nchunks* blocks of axis-0 planes, in threads above
    `PARALLEL_MIN` elements, then add the seams."""
    n0 = u.shape[1]
    nchunks = 1 if u.size < PARALLEL_MIN else max(1, min(nchunks, n0))
    seam = np.empty((nchunks,) + u.shape[:1] + u.shape[2:])
    bounds = [(t * n0 // nchunks, (t + 1) * n0 // nchunks) for t in range(nchunks)]
    if nchunks == 1:
        energies = [block(u, labels, table, cid, start, cols, out, 0, n0, seam[0])]
    else:
        energies = list(_pool(nchunks).map(
            lambda t: block(u, labels, table, cid, start, cols, out, *bounds[t], seam[t]),
            range(nchunks)))
    for t in range(nchunks):
        out[:, bounds[t][1] % n0] += seam[t]
    return float(sum(energies))


def apply_2d(u, labels, table, cid, start, cols, out, nchunks):
    """``out = A u`` on a 2D grid; *u*, *out* have shape (nc, n0, n1). Returns ``uᵀAu``.

    *nchunks* (1 … n0) blocks of pixel rows are processed in parallel (one block below
    `PARALLEL_MIN` elements). Each block accumulates into two row buffers (node rows i
    and i+1), so every output row is written once; the contribution of a block's last
    pixel row to the next block's first node row is added afterwards.
    """
    return _apply(_block_2d, u, labels, table, cid, start, cols, out, nchunks)


def apply_3d(u, labels, table, cid, start, cols, out, nchunks):
    """``out = A u`` on a 3D grid; *u*, *out* have shape (nc, n0, n1, n2). Returns ``uᵀAu``.

    As `apply_2d` with blocks of pixel planes and two plane buffers (small enough for the
    core's cache).
    """
    return _apply(_block_3d, u, labels, table, cid, start, cols, out, nchunks)


@Kernel(signature="void(complex128[:, :], float32[:, :])")
def fourier_multiply(rhat, kinv):
    """In place ``rhat[a] ← Σ_b kinv[a, b] rhat[b]`` per frequency (nc ≤ 3).

    *rhat* is (nc, m) complex; *kinv* (nc(nc+1)/2, m) real holds the symmetric blocks
    packed row by row (`fft.symmetric_pairs`).
    """
    nc, m = rhat.shape
    if nc == 1:
        for f in range(m):
            rhat[0, f] *= kinv[0, f]
    elif nc == 2:
        for f in range(m):
            r0 = rhat[0, f]
            r1 = rhat[1, f]
            rhat[0, f] = kinv[0, f] * r0 + kinv[1, f] * r1
            rhat[1, f] = kinv[1, f] * r0 + kinv[2, f] * r1
    else:
        for f in range(m):
            r0 = rhat[0, f]
            r1 = rhat[1, f]
            r2 = rhat[2, f]
            rhat[0, f] = kinv[0, f] * r0 + kinv[1, f] * r1 + kinv[2, f] * r2
            rhat[1, f] = kinv[1, f] * r0 + kinv[3, f] * r1 + kinv[4, f] * r2
            rhat[2, f] = kinv[2, f] * r0 + kinv[4, f] * r1 + kinv[5, f] * r2


@Kernel
def dot(x, y):
    """``Σ x·y`` of two flat arrays."""
    s = 0.0
    for i in range(x.shape[0]):
        s += x[i] * y[i]
    return s


@Kernel
def step(x, r, p, ap, alpha):
    """``x += α p``, ``r −= α Ap``; returns ``Σ r²``."""
    s = 0.0
    for i in range(x.shape[0]):
        x[i] += alpha * p[i]
        ri = r[i] - alpha * ap[i]
        r[i] = ri
        s += ri * ri
    return s


@Kernel
def new_direction(p, z, beta):
    """``p ← z + β p``."""
    for i in range(p.shape[0]):
        p[i] = z[i] + beta * p[i]
