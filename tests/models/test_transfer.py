"""Transfer tables, apply() and the swell window, each beside its analytic answer.

Analytic answers used:
- straight parallel contours: Snell's law sin θ/C = const and H = H0·Ks·Kr with
  Ks = sqrt(Cg_0/Cg), Kr = sqrt(cos θ0/cos θ) (Snell; SPM 1984 §2-III, from memory; worked example
  in docs/check-values.md §2, computed). Rays end at the wave base (h = L0/2, common practice),
  so the offshore end of the check is that depth; deep-water Snell differs there by < 0.5 %.
- deep water (reference deeper than L0/2): direction unchanged (straight rays), K² = C0·Cg0/(C·Cg)
  at the reference depth (within 0.3 % of 1): the invariant E·C·Cg (Longuet-Higgins 1957) read in
  deep water (common practice: beyond the wave base L0/2 the bottom does not bend the rays).
- constant depth beyond the wave base: straight rays, K = that K_deep(h) where open; an island of radius R
  at distance D blocks offshore directions within asin(R/D) of its bearing (tangent lines).
- Longuet-Higgins (1957) invariant E·C·Cg along rays (from memory; docs/methods.md §4).
"""

import math
from concurrent.futures import ThreadPoolExecutor

import numpy as np
import pytest

from models.bathymetry import DepthGrid
from models.errors import InvalidInput
from models.transfer import (
    ENGINE_VERSION,
    TransferTable,
    apply,
    build_table,
    build_tables,
    input_hash,
    reference_point,
    swell_window,
)
from models.waves import group_velocity, phase_speed

G = 9.80665


def planar(m=0.05, dx=50.0, cap=400.0):
    # shore along x = 0, sea to the east (shore-normal offshore FROM direction: 90 deg)
    x = np.arange(0, 8000 + dx, dx)
    y = np.arange(-12000, 12000 + dx, dx)
    return DepthGrid(np.minimum(m * x[None, :], cap) * np.ones((y.size, 1)), 0.0, -12000.0, dx, dx)


def ridge(dx=100.0):
    # ridge along the y axis, crest 40 m near the coast, fading into 100 m water by y = 12 km
    x = np.arange(-6000, 6000 + dx / 2, dx)
    y = np.arange(0, 16000 + dx / 2, dx)
    X, Y = np.meshgrid(x, y)
    ramp = np.clip((12000 - Y) / 8000, 0, 1)
    ramp = 0.5 - 0.5 * np.cos(np.pi * ramp)
    return DepthGrid(100 - 60 * np.exp(-((X / 800) ** 2)) * ramp, x[0], y[0], dx, dx)


@pytest.fixture(scope="module")
def planar_table():
    # open ocean east, north and south (from the data); every ray up to 60° off the normal crosses
    # the wave base before it reaches an edge, so it reports its state there
    return build_table(planar(), 200.0, 0.0, periods_s=[6.0, 10.0, 14.0], smoothing_m=0.0)


@pytest.mark.parametrize("p", [0, 1, 2])
@pytest.mark.parametrize("angle", [0.0, 10.0, 20.0, 30.0, 44.0, 60.0, -30.0, -60.0])
def test_planar_slope_matches_snell(planar_table, p, angle):
    t = planar_table
    T = t.periods_s[p]
    f = 1.0 / T
    k = int(round((90.0 + angle) / 2.0))
    hb = 0.5 * G * T**2 / (2 * np.pi)  # wave base where rays end
    hr = t.reference_depth_m
    th0 = math.radians(angle)
    thr = math.asin(math.sin(th0) * phase_speed(f, hr) / phase_speed(f, hb))  # Snell
    K = math.sqrt(group_velocity(f, hb) / group_velocity(f, hr)) * math.sqrt(math.cos(th0) / math.cos(thr))
    assert t.coefficient[p, k] == pytest.approx(K, rel=0.02)
    assert t.nearshore_direction_deg[p, k] == pytest.approx(90.0 + math.degrees(thr), abs=0.5)
    # against deep-water Snell too (wave base vs deep: < 0.5 % in C)
    thr0 = math.asin(math.sin(th0) * phase_speed(f, hr) / (G * T / (2 * np.pi)))
    K0 = math.sqrt(G * T / (4 * np.pi) / group_velocity(f, hr)) * math.sqrt(math.cos(th0) / math.cos(thr0))
    assert t.coefficient[p, k] == pytest.approx(K0, rel=0.02)


def test_planar_slope_directions_from_land_are_blocked(planar_table):
    t = planar_table
    land = (t.directions_deg > 181.0) & (t.directions_deg < 359.0)
    assert np.all(t.coefficient[:, land] == 0.0)
    assert np.all(np.isnan(t.nearshore_direction_deg[:, land]))
    assert np.all(np.isnan(t.travel_time_s[:, land]))
    sea = (t.directions_deg > 11.0) & (t.directions_deg < 169.0)  # up to 78° from the normal
    assert np.all(t.coefficient[:, sea] > 0.3) and np.all(t.open_fraction[:, sea] > 0.99)
    assert t.lost_fraction == 0.0


def test_reference_worked_example_10s_30deg():
    # docs/check-values.md §2 worked example (computed, g = 9.81): T = 10 s, θ0 = 30°, h = 10 m:
    # Ks·Kr = 0.9835·0.9522 = 0.9365, θ = 17.207° (deep-water Snell; our rays end at L0/2)
    t = build_table(planar(), 200.0, 0.0, periods_s=[10.0], smoothing_m=0.0, g=9.81)
    k = int(round((90.0 + 30.0) / 2.0))
    assert t.coefficient[0, k] == pytest.approx(0.9835 * 0.9522, rel=0.02)
    assert t.nearshore_direction_deg[0, k] - 90.0 == pytest.approx(17.207, abs=0.5)


def _ks(T, h):
    # K of a reference point beyond the wave base in open water: sqrt(C0·Cg0 / (C·Cg)(h))
    c0 = G * T / (2 * np.pi)
    return math.sqrt(0.5 * c0 * c0 / (phase_speed(1.0 / T, h) * group_velocity(1.0 / T, h)))


def test_deep_water_is_identity():
    # reference at 200 m, periods whose wave base L0/2 < 200 m: K = Ks(200 m), direction unchanged
    g = DepthGrid(np.full((41, 41), 200.0) + np.linspace(0, 50, 41)[None, :], 0, 0, 100.0, 100.0)
    t = build_table(g, 2000.0, 2000.0, periods_s=[5.0, 8.0, 12.0], smoothing_m=0.0)
    ks = np.array([_ks(T, t.reference_depth_m) for T in (5.0, 8.0, 12.0)])
    assert np.all(np.abs(ks - 1.0) < 2e-4) and ks[2] != 1.0
    np.testing.assert_allclose(t.coefficient, ks[:, None] * np.ones((1, 180)), rtol=1e-9)
    dd = (t.nearshore_direction_deg - t.directions_deg[None, :] + 180.0) % 360.0 - 180.0
    np.testing.assert_allclose(dd, 0.0, atol=1e-6)
    np.testing.assert_allclose(t.open_fraction, 1.0, rtol=1e-9)
    assert swell_window(t) == [[(0.0, 360.0)]] * 3


ISLAND_SEA_M = 60.0  # deeper than the 8 s wave base (L0/2 = 50 m): straight rays, K = Ks(60 m)


def _islands(centres, R, dx=20.0):
    # constant 60 m depth with circular islands (land -1 m) of radius R [m] at `centres`
    x = np.arange(-3000, 3000 + 1, dx)
    X, Y = np.meshgrid(x, x)
    land = np.zeros(X.shape, dtype=bool)
    for cx, cy in centres:
        land |= (X - cx) ** 2 + (Y - cy) ** 2 < R**2
    return DepthGrid(np.where(land, -1.0, ISLAND_SEA_M), x[0], x[0], dx, dx)


def test_island_shadow_matches_tangent_lines():
    R, D = 400.0, 2000.0
    t = build_table(_islands([(0.0, D)], R), 0.0, 0.0, periods_s=[8.0], smoothing_m=0.0, edge_min_depth=5.0)
    half = math.degrees(math.asin(R / D))  # tangent-line half-angle of the shadow (11.54 deg)
    d = (t.directions_deg + 180.0) % 360.0 - 180.0  # signed bearing from north (island bearing 0)
    k = t.coefficient[0] / _ks(8.0, ISLAND_SEA_M)  # relative to open water
    np.testing.assert_allclose(k[np.abs(d) > half + 3.0], 1.0, atol=1e-9)  # open: constant depth
    # the shadow's width by energy, sum (1 - K²)·Δθ, is the tangent-line width within a bin width
    # (the coastline of the interpolated grid sits up to a cell outside the circle)
    width = float(np.sum((1.0 - k**2) * t.direction_bin_deg))
    assert width == pytest.approx(2.0 * half, abs=t.direction_bin_deg)
    # inside the shadow only rays that graze the island's one-cell flank (a 1:2 slope) refract in:
    # a little energy, K² < 0.03 (ray theory; the old half-interval point masses are gone)
    assert np.all(k[np.abs(d) < half - 3.0] ** 2 < 0.03)
    # shadow edge = where K² crosses 1/2 (half the energy gets through): within a bin of the tangent
    arcs = swell_window(t, threshold=math.sqrt(0.5) * _ks(8.0, ISLAND_SEA_M))[0]
    assert len(arcs) == 1
    a, b = arcs[0]
    assert a == pytest.approx(half, abs=2.0)
    assert b == pytest.approx(360.0 - half, abs=2.0)
    assert t.meta["unresolved_fraction_by_period"][0] < 1e-4  # shadow edges resolved by bisection


@pytest.mark.parametrize("gap_m", [200.0, 80.0])
def test_narrow_gap_between_islands_stays_open(gap_m):
    # two islands of radius 400 m, 2 km north, with a gap of `gap_m` between them: straight rays
    # (constant depth) get through within the inner tangent lines, bearing ± (atan(c/D) - asin(R/Dc))
    R, D = 400.0, 2000.0
    c = R + 0.5 * gap_m
    g = _islands([(c, D), (-c, D)], R)
    t = build_table(g, 0.0, 0.0, periods_s=[8.0], smoothing_m=0.0, edge_min_depth=5.0)
    inner = math.degrees(math.atan2(c, D) - math.asin(R / math.hypot(c, D)))  # 2.85° / 1.14°
    d = (t.directions_deg + 180.0) % 360.0 - 180.0
    k = t.coefficient[0] / _ks(8.0, ISLAND_SEA_M)
    near = np.abs(d) < 12.0
    width = float(np.sum(k[near] ** 2) * t.direction_bin_deg)  # energy width of the beam
    assert width == pytest.approx(2.0 * inner, abs=t.direction_bin_deg)
    assert k[0] > (0.99 if gap_m > 100 else 0.5)  # the beam through the gap, due north
    (arc,) = [ab for ab in swell_window(t, threshold=0.3)[0] if ab[0] > 300 or ab[0] < 1.0]
    assert arc[0] > 350.0 and arc[1] < 10.0  # one narrow open arc through north, not erased


def test_window_has_no_stray_single_ray_arcs():
    # an island just off a bay-like corner: between launch rays blocked by the island and open rays
    # no arc may come from a single unresolved ray; every open arc is backed by resolved energy
    R, D = 400.0, 2000.0
    t = build_table(_islands([(0.0, D)], R), 0.0, 0.0, periods_s=[8.0], smoothing_m=0.0,
                    edge_min_depth=5.0, launch_spacing_deg=1.0)  # fmt: skip
    for lo, hi in swell_window(t, threshold=0.05)[0]:
        span = (hi - lo) % 360.0 or 360.0
        assert span >= 2.0 * t.direction_bin_deg


def test_open_only_through_open_ocean_edges():
    # deep water north of a reference point, but only the south edge is open ocean: rays that
    # leave north, east or west are blocked
    g = DepthGrid(np.full((41, 41), 200.0), 0, 0, 100.0, 100.0)
    t = build_table(g, 2000.0, 2000.0, periods_s=[8.0], smoothing_m=0.0, open_edges=["south"])
    d = t.directions_deg
    assert np.all(t.coefficient[0][(d > 136) & (d < 224)] == pytest.approx(1.0))
    assert np.all(t.coefficient[0][(d < 134) | (d > 226)] == 0.0)
    with pytest.raises(InvalidInput, match="`open_edges`"):
        build_table(g, 2000.0, 2000.0, periods_s=[8.0], open_edges=["up"])


def test_wave_base_is_not_open_behind_an_island():
    # 5 s waves: wave base 19.5 m (L0/2). The reference point sits in 30 m water, already beyond it,
    # but an island lies 2 km north: rays going north are blocked, not open at the wave base
    dx = 20.0
    x = np.arange(-3000, 3000 + 1, dx)
    X, Y = np.meshgrid(x, x)
    g = DepthGrid(np.where(X**2 + (Y - 2000.0) ** 2 < 400.0**2, -1.0, 30.0), x[0], x[0], dx, dx)
    t = build_table(g, 0.0, 0.0, periods_s=[5.0], smoothing_m=0.0)
    k = t.coefficient[0]
    d = (t.directions_deg + 180.0) % 360.0 - 180.0
    # shadowed (tangent half-angle 11.5°, geometry): only the grazing-flank leak (see above)
    assert np.all(k[np.abs(d) < 9.0] ** 2 < 0.03)
    width = float(np.sum((1.0 - k**2) * t.direction_bin_deg))
    assert width == pytest.approx(2.0 * math.degrees(math.asin(0.2)), abs=t.direction_bin_deg)
    np.testing.assert_allclose(k[np.abs(d) > 30.0], 1.0, atol=0.01)  # deep: K = 1 (0.4 % from flank rays)


@pytest.fixture(scope="module")
def ridge_tables():
    g = ridge()
    T = [6.0, 9.0, 13.0, 18.0]
    crest = build_table(g, 0.0, 2000.0, periods_s=T, smoothing_m=0.0, launch_spacing_deg=0.5)
    flank = build_table(g, 4000.0, 2000.0, periods_s=T, smoothing_m=0.0, launch_spacing_deg=0.5)
    return crest, flank


def test_ridge_focuses_long_period_swell(ridge_tables):
    crest, flank = ridge_tables
    band = (crest.directions_deg <= 20.0) | (crest.directions_deg >= 340.0)  # along the ridge axis
    gain = np.mean(crest.coefficient[:, band] ** 2, axis=1) / np.mean(flank.coefficient[:, band] ** 2, axis=1)
    # 6 s: crest (40 m) beyond the wave base (28 m) -> no focusing; then grows with period
    assert gain[0] == pytest.approx(1.0, abs=0.02)
    assert np.all(np.diff(gain) > 0.1)
    assert gain[-1] > 2.0
    assert crest.coefficient[-1, 0] > 1.5 * flank.coefficient[-1, 0]


def test_mirror_symmetry(ridge_tables):
    crest, _ = ridge_tables
    nd = crest.directions_deg.size
    mirror = (-np.arange(nd)) % nd  # x -> -x maps bearing d to 360 - d
    np.testing.assert_allclose(crest.coefficient, crest.coefficient[:, mirror], rtol=1e-6, atol=1e-9)
    nd_ = crest.nearshore_direction_deg
    ok = np.isfinite(nd_)
    np.testing.assert_allclose(np.cos(np.radians(nd_[ok])), np.cos(np.radians(-nd_[:, mirror][ok])), atol=1e-6)


def _smooth_bins(k):
    # bins away from caustics: K changes by < 5 % to both neighbours
    nb = np.roll(k, 1), np.roll(k, -1)
    kk = np.where(k > 0, k, 1.0)
    return (k > 0.3) & (np.abs(nb[0] / kk - 1) < 0.05) & (np.abs(nb[1] / kk - 1) < 0.05)


@pytest.mark.slow
def test_convergence_with_launch_and_grid_spacing(ridge_tables):
    crest, _ = ridge_tables
    p = 1  # 9 s
    base = crest.coefficient[p]
    m = _smooth_bins(base)
    assert m.sum() > 100
    fine_launch = build_table(ridge(), 0.0, 2000.0, periods_s=[9.0], smoothing_m=0.0, launch_spacing_deg=0.25)
    fine_grid = build_table(ridge(50.0), 0.0, 2000.0, periods_s=[9.0], smoothing_m=0.0, launch_spacing_deg=0.5)
    for t in (fine_launch, fine_grid):
        np.testing.assert_allclose(t.coefficient[0][m], base[m], rtol=0.02)


def test_caustics_stay_finite(ridge_tables):
    crest, _ = ridge_tables
    k = crest.coefficient
    assert np.all(np.isfinite(k))
    # K² in a bin is at most (launch circle measure / bin width)·max(CCg ratio); in practice far less
    assert k.max() < 6.0
    fine = build_table(ridge(), 0.0, 2000.0, periods_s=[18.0], smoothing_m=0.0, launch_spacing_deg=0.25)
    # no blow-up as the launch spacing shrinks (a singular caustic would grow like spacing^-1/2)
    assert fine.coefficient.max() < 1.5 * k[-1].max()


# ------------------------------------------------------------------ apply


def _spectrum(nd=36, mean=90.0, s=10.0):
    f = np.linspace(0.05, 0.25, 41)
    dirs = np.arange(nd) * 360.0 / nd
    e1 = np.exp(-(((f - 0.1) / 0.02) ** 2))  # m²/Hz
    spread = np.cos(np.radians(dirs - mean) / 2.0) ** (2 * s)
    spread /= spread.sum() * math.radians(360.0 / nd)  # ∫D dθ = 1 on this grid
    return f, dirs, e1[:, None] * spread[None, :], e1


def test_apply_identity_table_preserves_energy_and_direction():
    g = DepthGrid(np.full((21, 21), 1000.0), 0, 0, 100.0, 100.0)  # beyond the 25 s wave base (488 m)
    t = build_table(g, 1000.0, 1000.0, periods_s=[4.0, 25.0], smoothing_m=0.0)
    f, dirs, efth, e1 = _spectrum(mean=70.0)
    out = apply(t, f, dirs, efth)
    np.testing.assert_allclose(out.density, e1, rtol=2e-3)  # interpolation of 10° onto 2° bins
    np.testing.assert_allclose(out.mean_direction_deg, 70.0, atol=0.1)
    assert out.hs == pytest.approx(4 * math.sqrt(np.trapezoid(e1, f)), rel=2e-3)


def test_apply_is_vectorised_and_uses_k_squared(planar_table):
    f, dirs, efth, e1 = _spectrum(nd=180, mean=90.0, s=400.0)  # narrow around shore normal
    stack = np.stack([efth, 2 * efth, 0 * efth])  # three times
    out = apply(planar_table, f, dirs, stack)
    assert out.density.shape == (3, f.size) and out.hs.shape == (3,)
    np.testing.assert_allclose(out.density[1], 2 * out.density[0])
    assert np.all(out.density[2] == 0) and np.all(np.isnan(out.mean_direction_deg[2]))
    # at a table period the nearshore density is K²(normal)·E (narrow spectrum, K nearly flat there)
    j = np.argmin(np.abs(f - 0.1))
    assert out.density[0, j] == pytest.approx(planar_table.coefficient[1, 45] ** 2 * e1[j], rel=0.01)
    assert out.mean_direction_deg[0, j] == pytest.approx(90.0, abs=0.1)
    # from land: nothing arrives
    _, _, eland, _ = _spectrum(nd=180, mean=270.0, s=400.0)
    assert np.all(apply(planar_table, f, dirs, eland).density < 1e-6 * e1.max())


def test_apply_validates():
    g = DepthGrid(np.full((5, 5), 300.0), 0, 0, 100.0, 100.0)
    t = build_table(g, 200.0, 200.0, periods_s=[8.0], smoothing_m=0.0, launch_spacing_deg=2.0)
    with pytest.raises(InvalidInput, match="`efth`"):
        apply(t, [0.1, 0.2], [0.0, 90.0], np.ones((2, 3)))
    with pytest.raises(InvalidInput, match="`frequency_hz`"):
        apply(t, [-0.1, 0.2], [0.0, 90.0], np.ones((2, 2)))


# ------------------------------------------------------------------ window, storage, hashing


def _table_with(coef):
    nd = coef.shape[1]
    z = np.zeros_like(coef)
    return TransferTable(
        periods_s=np.arange(1.0, coef.shape[0] + 1), directions_deg=np.arange(nd) * 360.0 / nd,
        coefficient=coef, nearshore_direction_deg=z, travel_time_s=z, energy_travel_time_s=z,
        open_fraction=z, lost_fraction_by_period=np.zeros(coef.shape[0]), reference_depth_m=10.0,
        reference_x=1.0, reference_y=2.0, lost_fraction=0.0, meta={"smoothing_m": 40.0},
    )  # fmt: skip


def test_swell_window_arcs_wrap_through_north():
    c = np.zeros((3, 36))
    c[0, [35, 0, 1]] = 1.0  # bins centred 350, 0, 10 (10° bins): one arc 345 -> 15 through north
    c[1, [9, 10, 20]] = 0.5
    arcs = swell_window(_table_with(c))
    assert arcs[0] == [(345.0, 15.0)]
    assert arcs[1] == [(85.0, 105.0), (195.0, 205.0)]
    assert arcs[2] == []


def test_arrays_roundtrip():
    t = build_table(planar(), 200.0, 0.0, periods_s=[8.0], smoothing_m=0.0, launch_spacing_deg=1.0)
    d = t.to_arrays()
    t2 = TransferTable.from_arrays(d)
    for k in ("coefficient", "nearshore_direction_deg", "travel_time_s", "periods_s", "directions_deg"):
        np.testing.assert_array_equal(getattr(t, k), getattr(t2, k))
    assert t2.reference_depth_m == t.reference_depth_m and t2.meta == t.meta
    assert t.meta["engine_version"] == ENGINE_VERSION and t.meta["smoothing_m"] == 0.0
    with pytest.raises(InvalidInput, match="coefficient"):
        TransferTable.from_arrays({k: v for k, v in d.items() if k != "coefficient"})


def test_input_hash_changes_with_inputs():
    g = planar()
    h = input_hash(g, reference_depth_m=10.0, periods=[8.0, 10.0])
    assert h == input_hash(g, periods=[8.0, 10.0], reference_depth_m=10.0)
    assert h != input_hash(g, reference_depth_m=12.0, periods=[8.0, 10.0])
    d = g.depth.copy()
    d[5, 5] += 0.01
    assert h != input_hash(DepthGrid(d, g.x0, g.y0, g.dx, g.dy), reference_depth_m=10.0, periods=[8.0, 10.0])
    assert len(h) == 64


def test_travel_time_planar_normal_incidence(planar_table):
    # shore-normal plane crest through x = 0 travelling east->west: the reference point (x = 200 m)
    # is reached before the origin, so the crest arrival relative to x = 0 is negative
    t = planar_table
    assert t.travel_time_s[1, 45] < 0
    # offshore directions symmetric about the normal arrive at the same time (mirror in y)
    assert t.travel_time_s[1, 45 + 10] == pytest.approx(t.travel_time_s[1, 45 - 10], rel=1e-6)


# ------------------------------------------------------------------ reference point and batches


def test_reference_point_walks_down_the_gradient():
    g = planar()
    x, y, h = reference_point(g, 40.0, 100.0, 10.0)  # break at 2 m depth
    assert h == pytest.approx(10.0, abs=1e-6)
    assert x == pytest.approx(200.0, abs=1e-3)  # depth 0.05 x (analytic)
    assert y == pytest.approx(100.0, abs=1e-6)
    with pytest.raises(InvalidInput, match="on land"):
        reference_point(g, 0.0, 0.0, 10.0)
    with pytest.raises(InvalidInput, match="off the grid"):
        reference_point(g, -50.0, 0.0, 10.0)
    shelf = DepthGrid(np.minimum(planar().depth, 5.0), 0.0, -12000.0, 50.0, 50.0)
    with pytest.raises(InvalidInput, match="never reached"):
        reference_point(shelf, 40.0, 0.0, 10.0)


def test_build_tables_on_a_process_pool_equals_build_table():
    from concurrent.futures import ProcessPoolExecutor

    g = _islands([(0.0, 2000.0)], 400.0, dx=50.0)
    pts = [(0.0, 0.0), (600.0, -300.0)]
    kw = dict(periods_s=[6.0, 9.0, 14.0], smoothing_m=0.0, launch_spacing_deg=1.0, edge_min_depth=5.0)
    with ProcessPoolExecutor(2) as ex:
        many = build_tables(g, pts, executor=ex, period_chunks=2, **kw)
    for (x, y), t in zip(pts, many, strict=True):
        one = build_table(g, x, y, **kw)
        for key in ("coefficient", "nearshore_direction_deg", "travel_time_s", "open_fraction"):
            np.testing.assert_array_equal(getattr(one, key), getattr(t, key))
        assert one.meta == t.meta


def test_build_tables_equals_build_table_and_runs_on_an_executor():
    g = ridge(200.0)
    pts = [(0.0, 2000.0), (3000.0, 3000.0)]
    kw = dict(periods_s=[7.0, 11.0, 15.0], smoothing_m=0.0, launch_spacing_deg=1.0)
    seen = []
    with ThreadPoolExecutor(2) as ex:
        many = build_tables(g, pts, executor=ex, progress=lambda i, n: seen.append((i, n)), **kw)
    assert seen[-1] == (4, 4)
    for (x, y), t in zip(pts, many, strict=True):
        one = build_table(g, x, y, **kw)
        np.testing.assert_array_equal(one.coefficient, t.coefficient)
        np.testing.assert_array_equal(one.travel_time_s, t.travel_time_s)
    with pytest.raises(InvalidInput, match="unknown option"):
        build_tables(g, pts, bogus=1)


def test_build_table_validates():
    g = planar()
    with pytest.raises(InvalidInput, match="`direction_bin_deg`"):
        build_table(g, 200.0, 0.0, periods_s=[8.0], direction_bin_deg=7.0)
    with pytest.raises(InvalidInput, match="`periods_s`"):
        build_table(g, 200.0, 0.0, periods_s=[10.0, 8.0])
    with pytest.raises(InvalidInput, match="too shallow or on land"):
        build_table(g, 0.0, 0.0, periods_s=[8.0])


def test_a_table_carries_the_surf_zone_profile_along_the_arriving_energy():
    # planar beach, shore along x = 0, sea to the east: the energy arrives shore-normal (FROM 90°),
    # so the profile runs due west from the reference point and its bed is m·x (the grid itself)
    t = build_table(planar(), 200.0, 0.0, periods_s=[8.0, 12.0], smoothing_m=0.0, launch_spacing_deg=1.0)
    p = t.profile
    assert p is not None and not p.extended
    assert p.bearing_deg == pytest.approx(270.0, abs=0.5)
    k = int(np.argmin(p.bed_m > 0))  # the datum shoreline; the foreshore continues above it
    np.testing.assert_allclose(p.bed_m[:k], 0.05 * (200.0 - p.distance_m[:k]), atol=0.05)
    assert p.distance_m[k] == pytest.approx(200.0, abs=25.0) and p.bed_m[-1] <= -3.0
    t2 = TransferTable.from_arrays(t.to_arrays())
    assert t2.profile is not None and np.array_equal(t2.profile.bed_m, p.bed_m)
