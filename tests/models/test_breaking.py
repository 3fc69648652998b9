"""Breaking: breaker indices with their published check values, surf similarity, Snell +
shoaling over parallel contours, and the march to the break point."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from models import breaking as br
from models import waves
from models.errors import InvalidInput

G981 = 9.81  # the docs/check-values.md check values were computed with g = 9.81


class TestIndices:
    def test_mccowan(self):
        assert float(br.mccowan(2.0)) == pytest.approx(1.56)  # Hb/hb = 0.78 (McCowan 1894, from memory)

    def test_miche(self):
        # docs/check-values.md #16 (M formula, C values): T 10 s, h 5 m / deep -> 4.166 / 22.171 m
        np.testing.assert_allclose(br.miche_limit(10.0, [5.0, np.inf], g=G981), [4.166, 22.171], atol=1e-3)
        # deep water: 0.142 L0 ≈ L0/7
        assert float(br.miche_limit(8.0, np.inf)) / float(waves.deep_wavelength(8.0)) == pytest.approx(0.142)

    def test_weggel_coefficients(self):
        # docs/check-values.md #9 (R formula SPM 1984 eqs 2-93/2-94, C value): m = 0.02 -> a 13.847, b 0.9302; flat: a 0, b 0.78
        a, b = br.weggel_coefficients(0.02)
        assert float(a) == pytest.approx(13.847, abs=1e-3)
        assert float(b) == pytest.approx(0.9302, abs=1e-4)
        a0, b0 = br.weggel_coefficients(0.0)
        assert float(a0) == 0.0 and float(b0) == pytest.approx(0.78)

    @pytest.mark.parametrize(
        ("hb", "T", "m", "db", "gamma_b"),
        # docs/check-values.md #9 and #10 (R formula, C value; Weggel 1972 / SPM 1984 eq. 2-92)
        [(2.0, 10.0, 0.02, 2.2174, 0.9020), (3.0, 14.0, 0.1, 2.2943, 1.3076)],
    )
    def test_weggel_depth_and_exact_inverse(self, hb, T, m, db, gamma_b):
        d = float(br.weggel_breaker_depth(hb, T, m, g=G981))
        assert d == pytest.approx(db, abs=1e-4)
        assert hb / d == pytest.approx(gamma_b, abs=1e-4)
        assert float(br.weggel_breaker_height(d, T, m, g=G981)) == pytest.approx(hb, rel=1e-14)

    @settings(max_examples=60, deadline=None)
    @given(db=st.floats(0.1, 20.0), T=st.floats(4.0, 22.0), m=st.floats(0.001, 0.1))
    def test_weggel_inverse_property(self, db, T, m):
        hb = br.weggel_breaker_height(db, T, m)
        assert float(br.weggel_breaker_depth(hb, T, m)) == pytest.approx(db, rel=1e-12)

    def test_komar_gaudiano(self):
        # docs/check-values.md #11 (M formula K&G 1975, C value): H0 1 m, T 10 s -> 1.5467 m
        assert float(br.komar_gaudiano(1.0, 10.0, g=G981)) == pytest.approx(1.5467, abs=1e-4)
        # equivalent form Hb/H0 = 0.563 (H0/L0)^(-1/5) agrees to 0.05 % (docs/check-values.md, C)
        L0 = float(waves.deep_wavelength(10.0, g=G981))
        assert float(br.komar_gaudiano(1.0, 10.0, g=G981)) == pytest.approx(0.563 * (1 / L0) ** -0.2, rel=5e-4)

    def test_goda(self):
        # docs/check-values.md #12 (M formula Goda 1970, A 0.17 and coefficient 15; C value): h 2, T 10, m 0.02 -> 1.6773 m
        assert float(br.goda_breaker_height(2.0, 10.0, 0.02, g=G981)) == pytest.approx(1.6773, abs=1e-4)
        # shallow limit: Hb -> 1.5π A h (1 + 15 m^(4/3)) (exact from the formula)
        h = 1e-3
        assert float(br.goda_breaker_height(h, 10.0, 0.0 + 1e-12)) == pytest.approx(1.5 * np.pi * 0.17 * h, rel=1e-3)

    def test_battjes_janssen_fraction(self):
        # docs/check-values.md #14 (M formula BJ78, C values): Hrms/Hm 0.5 / 0.7 / 0.9 -> 0.019827 / 0.19241 / 0.64574
        q = br.battjes_janssen_fraction([0.5, 0.7, 0.9], 1.0)
        np.testing.assert_allclose(q, [0.019827, 0.19241, 0.64574], atol=6e-6)  # to the digits quoted
        b2 = np.array([0.5, 0.7, 0.9]) ** 2
        np.testing.assert_allclose((1 - q) / np.log(q), -b2, rtol=1e-12)  # satisfies its equation
        np.testing.assert_array_equal(br.battjes_janssen_fraction([0.0, 1.0, 2.0], 1.0), [0.0, 1.0, 1.0])

    @settings(max_examples=80, deadline=None)
    @given(ratio=st.floats(0.05, 0.999))
    def test_battjes_janssen_property(self, ratio):
        q = float(br.battjes_janssen_fraction(ratio, 1.0))
        assert 0.0 <= q < 1.0
        if q > 1e-300:
            assert (1 - q) / np.log(q) == pytest.approx(-(ratio**2), rel=1e-9)
        assert float(br.battjes_janssen_fraction(min(ratio * 1.01, 0.9999), 1.0)) >= q  # rises with Hrms/Hm

    def test_battjes_stive_gamma(self):
        # docs/check-values.md #15 (M formula BS85, C value): s0 = 0.02 -> 0.7313
        assert float(br.battjes_stive_gamma(0.02)) == pytest.approx(0.7313, abs=1e-4)


class TestSurfSimilarity:
    def test_iribarren_check_value(self):
        # docs/check-values.md #17 (C; Battjes 1974): m 0.1, H0 1 m, T 12 s -> ξ0 = 1.4994, plunging offshore
        xi = float(br.iribarren(0.1, 1.0, 12.0, g=G981))
        assert xi == pytest.approx(1.4994, abs=1e-4)
        assert str(br.breaker_type(xi, at="offshore")) == "plunging"

    @pytest.mark.parametrize(
        ("at", "xi", "kind"),
        # Battjes (1974) thresholds: breaking 0.4 / 2.0 (R: coastalwiki), offshore 0.5 / 3.3 (from memory)
        [
            ("breaking", 0.39, "spilling"), ("breaking", 0.4, "plunging"), ("breaking", 1.99, "plunging"),
            ("breaking", 2.0, "collapsing"), ("offshore", 0.49, "spilling"), ("offshore", 0.5, "plunging"),
            ("offshore", 3.29, "plunging"), ("offshore", 3.3, "collapsing"),
        ],
    )  # fmt: skip
    def test_breaker_type_thresholds(self, at, xi, kind):
        assert str(br.breaker_type(xi, at=at)) == kind

    def test_breaker_type_arrays_and_errors(self):
        assert br.breaker_type([0.1, 1.0, 5.0]).tolist() == ["spilling", "plunging", "collapsing"]
        with pytest.raises(InvalidInput, match="`at`"):
            br.breaker_type(1.0, at="inshore")
        with pytest.raises(InvalidInput, match="`xi`"):
            br.breaker_type(np.nan)


class TestPower:
    def test_deep_water_spectral_power(self):
        # deep water P = ρ g² Hm0² Te / (64 π) (standard, from memory)
        p = float(br.wave_power(2.0, 10.0, kind="spectral"))
        assert p == pytest.approx(1025 * waves.G**2 * 4 * 10 / (64 * np.pi), rel=1e-12)

    def test_regular_power_at_depth_and_crest_speed(self):
        p = float(br.wave_power(1.0, 10.0, depth=10.0, g=G981))
        assert p == pytest.approx(1025 * G981 / 8 * 8.0699, rel=1e-4)  # Cg(10 s, 10 m) = 8.0699 (docs/check-values.md §1, C)
        # docs/check-values.md §5 (C): hb = 2 m -> Cb = √(g hb) = 4.429 m/s
        assert float(br.breaking_crest_speed(2.0, g=G981)) == pytest.approx(4.429, abs=1e-3)
        assert float(br.breaking_crest_speed(2.0, period=12.0)) < float(br.breaking_crest_speed(2.0))


class TestSnell:
    @pytest.mark.parametrize(
        ("h", "H", "theta"),
        # docs/check-values.md §2 worked example (C): H0 2 m, T 10 s, θ0 30°, parallel contours
        [(20.0, 1.7788, 22.846), (10.0, 1.8730, 17.207), (5.0, 2.0925, 12.518), (3.0, 2.3185, 9.801)],
    )
    def test_worked_example(self, h, H, theta):
        r = br.refract_and_shoal(2.0, 10.0, 30.0, np.inf, h, g=G981)
        assert float(r.height) == pytest.approx(H, abs=1e-4)
        assert float(r.angle_deg) == pytest.approx(theta, abs=1e-3)

    def test_path_independence_and_reversibility(self):
        a = br.refract_and_shoal(1.5, 12.0, 25.0, 30.0, 4.0)
        mid = br.refract_and_shoal(1.5, 12.0, 25.0, 30.0, 11.0)
        b = br.refract_and_shoal(mid.height, 12.0, mid.angle_deg, 11.0, 4.0)
        np.testing.assert_allclose(b, a, rtol=1e-12)
        back = br.refract_and_shoal(a.height, 12.0, a.angle_deg, 4.0, 30.0)
        np.testing.assert_allclose(back, (1.5, 25.0), rtol=1e-12)

    def test_total_reflection_raises(self):
        with pytest.raises(InvalidInput, match="`to_depth`"):
            br.refract_and_shoal(1.0, 12.0, 80.0, 3.0, 200.0)


class TestShoalToBreaking:
    def test_break_point_satisfies_weggel_and_is_the_first_crossing(self):
        r = br.shoal_to_breaking(1.0, 10.0, 20.0, 20.0, slope=0.02)
        assert not bool(r.broke_at_start)
        assert float(r.height) == pytest.approx(float(br.weggel_breaker_height(r.depth, 10.0, 0.02)), rel=1e-9)
        # consistent with carrying the wave to db directly
        s = br.refract_and_shoal(1.0, 10.0, 20.0, 20.0, r.depth)
        assert float(s.height) == pytest.approx(float(r.height), rel=1e-12)
        assert float(s.angle_deg) == pytest.approx(float(r.angle_deg), rel=1e-12)
        # every depth between the start and db is still unbroken
        for h in np.linspace(float(r.depth) * 1.001, 20.0, 50):
            assert float(br.refract_and_shoal(1.0, 10.0, 20.0, 20.0, h).height) < float(br.weggel_breaker_height(h, 10.0, 0.02))
        assert float(r.iribarren) == pytest.approx(float(br.iribarren(0.02, r.height, 10.0)))
        assert str(r.breaker_type) == str(br.breaker_type(r.iribarren))
        assert float(r.deep_water_height) == pytest.approx(float(r.height / waves.shoaling_coefficient(0.1, r.depth)))
        assert float(r.komar_gaudiano_height) == pytest.approx(float(br.komar_gaudiano(r.deep_water_height, 10.0)))

    def test_komar_gaudiano_is_of_the_same_size(self):
        # two independent routes to Hb (linear shoaling + Weggel vs the K&G field fit) agree within ~15 %
        r = br.shoal_to_breaking(np.array([0.8, 1.5, 2.5]), np.array([8.0, 12.0, 16.0]), 0.0, 30.0, slope=0.02)
        np.testing.assert_allclose(r.height, r.komar_gaudiano_height, rtol=0.15)

    def test_wave_already_breaking_at_the_start(self):
        r = br.shoal_to_breaking([3.0, 0.5], 10.0, [10.0, 10.0], 3.0, slope=0.02)
        assert r.broke_at_start.tolist() == [True, False]
        assert float(r.height[0]) == 3.0 and float(r.depth[0]) == 3.0 and float(r.angle_deg[0]) == 10.0
        assert float(r.depth[1]) < 3.0

    def test_vectorised_agrees_with_scalar_calls(self):
        H = np.array([0.5, 1.0, 2.0, 3.0])
        T = np.array([7.0, 10.0, 13.0, 17.0])
        th = np.array([0.0, 15.0, -30.0, 45.0])
        r = br.shoal_to_breaking(H, T, th, 15.0, slope=0.03)
        assert r.height.shape == (4,)
        for i in range(4):
            one = br.shoal_to_breaking(H[i], T[i], th[i], 15.0, slope=0.03)
            assert float(one.height) == pytest.approx(float(r.height[i]), rel=1e-12)
            assert float(one.depth) == pytest.approx(float(r.depth[i]), rel=1e-12)
        assert np.all(np.sign(r.angle_deg[1:]) == np.sign(th[1:]))
        assert np.all(np.abs(r.angle_deg) <= np.abs(th))  # refraction turns rays towards the normal
        grid = br.shoal_to_breaking(H[:, None], T[None, :], 0.0, 15.0, slope=0.03)
        assert grid.height.shape == (4, 4)

    @settings(max_examples=30, deadline=None)
    @given(
        H=st.floats(0.2, 4.0), T=st.floats(5.0, 20.0), th=st.floats(-60.0, 60.0), h=st.floats(4.0, 60.0),
        m=st.floats(0.005, 0.1),
    )  # fmt: skip
    def test_energy_flux_and_snell_invariant_to_the_break(self, H, T, th, h, m):
        r = br.shoal_to_breaking(H, T, th, h, slope=m)
        f = 1 / T
        flux0 = H**2 * float(waves.group_velocity(f, h)) * np.cos(np.deg2rad(th))
        flux1 = float(r.height) ** 2 * float(waves.group_velocity(f, r.depth)) * np.cos(np.deg2rad(float(r.angle_deg)))
        if not bool(r.broke_at_start):
            assert flux1 == pytest.approx(flux0, rel=1e-9)
            snell0 = np.sin(np.deg2rad(th)) / float(waves.phase_speed(f, h))
            snell1 = np.sin(np.deg2rad(float(r.angle_deg))) / float(waves.phase_speed(f, r.depth))
            assert snell1 == pytest.approx(snell0, rel=1e-9, abs=1e-15)
            assert float(r.height) >= float(br.weggel_breaker_height(r.depth, T, m)) * (1 - 1e-9)
        assert np.isfinite(float(r.height)) and float(r.depth) > 0

    @pytest.mark.parametrize(
        ("kw", "match"),
        [
            ({"height": -1.0}, "`height`"), ({"period": 0.0}, "`period`"), ({"angle_deg": 95.0}, "`angle_deg`"),
            ({"depth": np.nan}, "`depth`"), ({"slope": 0.0}, "`slope`"), ({"slope": 0.9}, "`slope`"),
        ],
    )  # fmt: skip
    def test_bad_arguments(self, kw, match):
        args = {"height": 1.0, "period": 10.0, "angle_deg": 0.0, "depth": 10.0, "slope": 0.02}
        args.update(kw)
        with pytest.raises(ValueError, match=match):
            br.shoal_to_breaking(args.pop("height"), args.pop("period"), args.pop("angle_deg"), args.pop("depth"), **args)


@pytest.mark.parametrize(
    ("call", "match"),
    [
        (lambda: br.weggel_breaker_depth(-1.0, 10.0, 0.02), "`hb`"),
        (lambda: br.weggel_breaker_height(2.0, 10.0, -0.1), "`slope`"),
        (lambda: br.komar_gaudiano(1.0, np.nan), "`period`"),
        (lambda: br.goda_breaker_height(2.0, 10.0, 0.02, A=-1), "`A`"),
        (lambda: br.battjes_janssen_fraction(-0.1, 1.0), "`hrms`"),
        (lambda: br.battjes_janssen_fraction(0.5, 0.0), "`hmax`"),
        (lambda: br.iribarren(0.1, 0.0, 10.0), "`height`"),
        (lambda: br.wave_power(1.0, 10.0, kind="peak"), "`kind`"),
    ],
)
def test_bad_input_names_the_argument(call, match):
    with pytest.raises(InvalidInput, match=match):
        call()


# --------------------------------------------------------------------------- wind on the breaker type
# Douglass (1990, J. Waterway Port Coastal Ocean Eng. 116(6)): onshore wind makes waves break earlier
# and spill, offshore wind holds them up and makes them plunge. The tested property is that direction;
# the size of the shift is ours (models/breaking.py). Type order: spilling < plunging < collapsing.
_RANK = {"spilling": 0, "plunging": 1, "collapsing": 2}
_xi = st.floats(0.01, 5.0)
_wind = st.floats(0.1, 40.0)


@settings(max_examples=200, deadline=None)
@given(_xi, _wind)
def test_onshore_wind_never_more_plunging_and_offshore_never_more_spilling(xi, u):
    still = _RANK[str(br.breaker_type(xi))]
    assert _RANK[str(br.breaker_type_in_wind(xi, u))] <= still  # onshore (u > 0)
    assert _RANK[str(br.breaker_type_in_wind(xi, -u))] >= still  # offshore (u < 0)


@given(st.lists(_xi, min_size=1, max_size=20))
def test_no_wind_is_the_still_air_type_exactly(xis):
    x = np.array(xis)
    np.testing.assert_array_equal(br.breaker_type_in_wind(x, np.full(x.size, np.nan)), br.breaker_type(x))
    np.testing.assert_array_equal(br.breaker_type_in_wind(x, 0.0), br.breaker_type(x))


def test_the_wind_moves_only_the_spilling_plunging_boundary():
    # Battjes (1974) ξb boundaries 0.4 and 2.0 in still air; ours: 0.4 (1 + 0.25 u/10), |u| <= 10 m/s
    np.testing.assert_allclose(br.wind_spilling_limit([np.nan, 0.0, 10.0, 30.0, -10.0, -4.0]),
                               [0.4, 0.4, 0.5, 0.5, 0.3, 0.36])  # fmt: skip
    assert str(br.breaker_type_in_wind(0.45, 10.0)) == "spilling"  # plunging in still air
    assert str(br.breaker_type_in_wind(0.35, -10.0)) == "plunging"  # spilling in still air
    assert str(br.breaker_type_in_wind(1.99, -40.0)) == "plunging"  # never pushed into collapsing
    with pytest.raises(InvalidInput, match="onshore_m_s"):
        br.wind_spilling_limit(np.inf)
