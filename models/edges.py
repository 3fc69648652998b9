"""Beyond an open grid edge: the straight contours a ray short of its wave base is continued over.

A ray that leaves the grid in intermediate depth is continued to deep water by Snell's law over
straight, parallel contours (Munk & Arthur 1952; SPM 1984 §2-III). Which contours? The local
gradient where the ray leaves is one cell's worth of survey noise on a nearly flat edge, and near
grazing incidence Snell amplifies a small error in the contour direction into a large one in the
deep-water direction (on the demo's headland it opened a window over land with K up to 3.5). So:

* **Contour direction**: a least-squares plane h = a + b·x + c·y over the water cells of a strip
  along the edge (`EDGE_ALONG_M` long, centred on the exit, `EDGE_INWARD_M` deep into the grid).
  The edge is cut into blocks of about that length, one plane each, so within a block the
  continuation is exactly Snell over one set of straight contours (a normal that followed the
  exit point would turn with the rays and fold beams into spurious caustics). The plane's
  gradient is the seaward normal of the contours beyond, unless the plane explains less than
  `MIN_EXPLAINED` of the depth variance in the strip (a flat, noisy bottom), its slope is below
  `FLAT_SLOPE`, or it points more than 120° away from the edge's outward normal (the bottom would
  shoal across an open-ocean edge). Such a strip shows no contours worth extrapolating, and a flat
  bottom does not refract: the ray goes on straight, its deep-water direction its exit direction.
* **Land beyond the edge**: a coast that reaches an edge is taken to go on straight beyond it,
  along the direction of its own nearshore contours where it meets the edge. A continued ray whose
  deep-water direction, drawn from its exit point, crosses such a continued coastline would have
  come over land and is blocked (a swell from behind the coast does not reach the spot).

Everything is computed once per grid (`edge_contours`) and looked up per exit point.
"""

from __future__ import annotations

import math
import weakref
from typing import NamedTuple

import numpy as np
from numpy.typing import NDArray

from models.bathymetry import DepthGrid

__all__ = ["EDGE_ALONG_M", "EDGE_INWARD_M", "EdgeContours", "continue_to_deep", "edge_contours"]

EDGES = ("south", "north", "west", "east")
_OUTWARD = np.array([[0.0, -1.0], [0.0, 1.0], [-1.0, 0.0], [1.0, 0.0]])  # per EDGES
_ALONG = np.array([[1.0, 0.0], [1.0, 0.0], [0.0, 1.0], [0.0, 1.0]])  # +x or +y along each edge

EDGE_ALONG_M = 5000.0  # along-edge length of the plane fit [m] (several km: averages out survey noise)
EDGE_INWARD_M = 2000.0  # how far into the grid the strip reaches [m]
COAST_FIT_M = 1000.0  # half-size of the patch whose contours give a coast's direction at the edge [m]
MIN_EXPLAINED = 0.5  # the plane must explain at least this share of the strip's depth variance
FLAT_SLOPE = 1e-4  # below this fitted slope the strip counts as flat (rays go on straight)
_MIN_CELLS = 6
_BACK = -0.5  # a fitted normal more than 120° from the edge's outward one points back into the grid
_H_FLOOR = 1e-3
_CACHE: weakref.WeakKeyDictionary = weakref.WeakKeyDictionary()  # grid -> EdgeContours


class EdgeContours(NamedTuple):
    """Per edge (EDGES order): the seaward unit normal of the contours beyond each edge cell
    (n_cells, 2), whether it came from the plane fit (else the edge's outward normal, and rays go
    on straight there), and the
    coastlines continued beyond the edges as half-lines (m, 4): start x, y and unit direction."""

    normals: tuple[NDArray[np.float64], ...]
    fitted: tuple[NDArray[np.bool_], ...]
    coasts: NDArray[np.float64]


def _strip(h: NDArray[np.float64], side: int, n_in: int) -> NDArray[np.float64]:
    """(n_in, n_along) cells next to edge `side`: row 0 on the edge, row k k cells inward."""
    if side == 0:
        s = h[:n_in, :]
    elif side == 1:
        s = h[::-1, :][:n_in, :]
    elif side == 2:
        s = h[:, :n_in].T
    else:
        s = h[:, ::-1][:, :n_in].T
    return np.asarray(s, dtype=float)


def _plane_fits(s: NDArray[np.float64], da: float, dr: float, blocks: NDArray[np.intp]):
    """Least-squares planes h = p0 + p1·a + p2·r over the water cells of strip `s` (a along the
    edge, r inward), one per block of along-edge cells (`blocks`: each block's first cell).
    Returns per block (p1, p2, explained variance share, ok) with ok False where the block holds
    too few cells, or too few rows, to fit a plane."""
    n_in, n_al = s.shape
    w = (s > 0).astype(float)
    hw = np.where(w > 0, s, 0.0)
    r = dr * np.arange(n_in)[:, None]
    ai = da * np.arange(n_al)
    cnt = w.sum(0)
    cols = np.stack(
        [cnt, (w * r).sum(0), (w * r * r).sum(0), hw.sum(0), (hw * hw).sum(0), (hw * r).sum(0),
         cnt * ai, cnt * ai * ai, (w * r).sum(0) * ai, hw.sum(0) * ai],
        axis=-1,
    )  # fmt: skip
    n, sr, srr, sh, shh, srh, sa, saa, sar, sah = np.add.reduceat(cols, blocks, axis=0).T
    ok = n >= _MIN_CELLS
    nn = np.where(ok, n, 1.0)
    ma, mr, mh = sa / nn, sr / nn, sh / nn
    caa, crr, car = saa / nn - ma * ma, srr / nn - mr * mr, sar / nn - ma * mr
    cah, crh, chh = sah / nn - ma * mh, srh / nn - mr * mh, shh / nn - mh * mh
    det = caa * crr - car * car
    ok &= det > 1e-9 * np.maximum(caa * crr, 1e-300)
    dd = np.where(ok, det, 1.0)
    p1 = (crr * cah - car * crh) / dd
    p2 = (caa * crh - car * cah) / dd
    explained = np.where(chh > 0, (p1 * cah + p2 * crh) / np.where(chh > 0, chh, 1.0), 0.0)
    return np.where(ok, p1, 0.0), np.where(ok, p2, 0.0), explained, ok


def _blocks(n_cells: int, da: float) -> NDArray[np.intp]:
    """First cell of each along-edge block: equal blocks of about EDGE_ALONG_M (one for an edge up
    to 1.5 times that long)."""
    nb = max(1, int(round((n_cells - 1) * da / EDGE_ALONG_M)))
    return np.unique(np.linspace(0, n_cells, nb + 1)[:-1].astype(np.intp))


def _spacings(grid: DepthGrid, side: int) -> tuple[float, float]:
    """(along-edge, inward) cell spacing of edge `side` [m]."""
    return (grid.dx, grid.dy) if side < 2 else (grid.dy, grid.dx)


def _edge_origin(grid: DepthGrid, side: int) -> NDArray[np.float64]:
    """Position of edge cell 0 (the along-edge start) of edge `side`."""
    xmin, xmax, ymin, ymax = grid.extent
    return np.array([(xmin, ymin), (xmin, ymax), (xmin, ymin), (xmax, ymin)][side])


def edge_contours(grid: DepthGrid) -> EdgeContours:
    """The contour normals beyond each edge cell and the coasts continued beyond the edges (see
    the module docstring). Pure in `grid` (cached on it)."""
    cached = _CACHE.get(grid)
    if cached is not None:
        return cached
    h = grid.filled
    normals, fitted, coasts = [], [], []
    for side in range(4):
        da, dr = _spacings(grid, side)
        n_in_all = h.shape[0] if side < 2 else h.shape[1]
        s = _strip(h, side, min(n_in_all, int(round(EDGE_INWARD_M / dr)) + 1))
        blocks = _blocks(s.shape[1], da)
        p1, p2, explained, ok = _plane_fits(s, da, dr, blocks)
        # every edge cell takes its block's plane
        which = np.searchsorted(blocks, np.arange(s.shape[1]), side="right") - 1
        p1, p2, explained, ok = p1[which], p2[which], explained[which], ok[which]
        out, al = _OUTWARD[side], _ALONG[side]
        # gradient in x, y: p1 along the edge, p2 inward (= -outward)
        g = p1[:, None] * al[None, :] - p2[:, None] * out[None, :]
        slope = np.hypot(g[:, 0], g[:, 1])
        use = ok & (slope >= FLAT_SLOPE) & (explained >= MIN_EXPLAINED) & (g @ out > _BACK * slope)
        nrm = np.where(use[:, None], g / np.where(slope > 0, slope, 1.0)[:, None], out[None, :])
        normals.append(nrm)
        fitted.append(use)
        coasts.extend(_coasts(grid, side, s, da, dr))
    res = EdgeContours(tuple(normals), tuple(fitted), np.array(coasts, dtype=float).reshape(-1, 4))
    _CACHE[grid] = res
    return res


def _coasts(grid: DepthGrid, side: int, s: NDArray[np.float64], da: float, dr: float) -> list[tuple[float, ...]]:
    """Half-lines continuing each coast that meets edge `side` beyond it: from the first land cell
    of a land run, along the contours of the water next to it (a small plane fit), pointing out."""
    row = s[0] > 0
    out, al = _OUTWARD[side], _ALONG[side]
    o = _edge_origin(grid, side)
    n_in = min(s.shape[0], int(round(COAST_FIT_M / dr)) + 1)
    half = max(1, int(round(COAST_FIT_M / da)))
    res = []
    for i in np.flatnonzero(row[:-1] != row[1:]):
        land = i + 1 if row[i] else i  # the land cell of the water/land pair
        lo, hi = max(0, land - half), min(s.shape[1], land + half + 1)
        p1, p2, _, ok = _plane_fits(s[:n_in, lo:hi], da, dr, np.array([0]))
        g = p1[0] * al - p2[0] * out
        gn = math.hypot(g[0], g[1])
        c = np.array([-g[1], g[0]]) / gn if ok[0] and gn > FLAT_SLOPE else out.copy()
        if c @ out < 0:
            c = -c
        if c @ out < 0.17:  # a coast running along the edge (within 10°): continue it straight out
            c = out.copy()
        q = o + land * da * al
        res.append((q[0], q[1], c[0], c[1]))
    return res


def _crosses_coast(px, py, dx, dy, coasts: NDArray[np.float64]) -> NDArray[np.bool_]:
    """Does the half-line from (px, py) along (dx, dy) cross any continued coast half-line?"""
    if not coasts.size:
        return np.zeros(px.shape, dtype=bool)
    qx, qy, cx, cy = (coasts[:, j][None, :] for j in range(4))
    ex, ey = qx - px[:, None], qy - py[:, None]
    det = -dx[:, None] * cy + dy[:, None] * cx
    with np.errstate(divide="ignore", invalid="ignore"):
        t = (-ex * cy + ey * cx) / det
        u = (dx[:, None] * ey - dy[:, None] * ex) / det
    hit = (np.abs(det) > 1e-12) & (t > 0) & (u >= 0)
    return np.any(hit, axis=1)


def continue_to_deep(
    grid: DepthGrid,
    x: NDArray[np.float64],
    y: NDArray[np.float64],
    depth: NDArray[np.float64],
    theta: NDArray[np.float64],
    u_ratio: NDArray[np.float64],
    side: NDArray[np.intp],
) -> tuple[NDArray[np.bool_], NDArray[np.float64], NDArray[np.bool_]]:
    """For rays leaving edge `side` at (x, y) with direction `theta` [rad, math] where Ce/C0 is
    `u_ratio`: can they come from deep water, and from which direction?

    Along the continued ray Snell's invariant sin α / C is conserved (α from the seaward contour
    normal n of `edge_contours`), so sin α0 = sin αe · C0/Ce in deep water. The ray reaches deep
    water if it heads seaward (cos αe > 0) and sin αe < Ce/C0 (otherwise it would turn back
    first: a trapped ray running along the coast); beyond a flat strip it goes on straight. Either
    way its deep-water direction, drawn from the exit point, must not cross a coast continued
    beyond an edge. Returns (reaches, deep-water direction [rad, math], straight: beyond a flat
    strip, where the contours are in effect square to the ray and Snell bends nothing).
    """
    ec = edge_contours(grid)
    nx = np.empty(x.size)
    ny = np.empty(x.size)
    fit = np.zeros(x.size, dtype=bool)
    for sd in range(4):
        m = side == sd
        if not np.any(m):
            continue
        da, _ = _spacings(grid, sd)
        o = _edge_origin(grid, sd)
        pos = (x[m] - o[0]) if sd < 2 else (y[m] - o[1])
        nrm = ec.normals[sd]
        i = np.clip(np.rint(pos / da).astype(np.intp), 0, nrm.shape[0] - 1)
        nx[m], ny[m], fit[m] = nrm[i, 0], nrm[i, 1], ec.fitted[sd][i]
    cs, sn = np.cos(theta), np.sin(theta)
    cos_a = cs * nx + sn * ny
    sin_a = nx * sn - ny * cs  # signed: positive counter-clockwise from n
    snell = (cos_a > 0) & (np.abs(sin_a) < u_ratio)
    s0 = np.clip(sin_a / u_ratio, -1.0, 1.0)
    theta0 = np.where(fit, np.arctan2(ny, nx) + np.arcsin(s0), theta)
    # a flat strip has no contours to refract over: the ray goes on straight (it is leaving the grid)
    reaches = np.where(fit, snell, cos_a > 0) & (depth > _H_FLOOR)
    reaches &= ~_crosses_coast(x, y, np.cos(theta0), np.sin(theta0), ec.coasts)
    return reaches, np.where(reaches, theta0, theta), ~fit
