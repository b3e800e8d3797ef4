"""Checks of the FFT convolution: kernels (kernels.py), placement (cells.py), FFT and tiles (convolution.py).

Every expected value is a cross-check against the direct per-source sum of the long-term engine
(``longterm.source_concentration_g_m3_per_g_s`` through ``offset_concentration_g_m3_per_g_s``,
the same engine at the true source positions), or a conservation or symmetry property.
Tolerances: 1e-12 where only floating-point rounding differs (a few dozen operations, values
spanning decades: rtol); 1e-9 relative, with a floor of 1e-12 of the field's largest value,
where an FFT is involved (its round-off is about 1e-15 of the largest value, so cells far below
the peak carry more relative error); the placement error bounds are measured values (see
test_bilinear_placement_error_falls_as_one_over_distance) with about 20 % head-room.
"""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from siting.dispersion.cells import near_field_correction, place_on_cells
from siting.dispersion.convolution import convolve_emissions, tile_concentration
from siting.dispersion.inputs import DispersionSettings, WeatherClasses
from siting.dispersion.kernels import (
    ReleaseClass,
    kernel_half_size,
    offset_concentration_g_m3_per_g_s,
    offset_lattice,
    release_class,
    unit_kernel,
)
from siting.readers.frequency_table import read_frequency_table
from siting.readers.resources import demo_dir

CELL_M = 100.0


@pytest.fixture(scope="module")
def weather():
    """The invented demo frequency table: 12 sectors x 4 speeds x 6 classes."""
    table, _ = read_frequency_table(demo_dir() / "weather_table.csv")
    return table


@pytest.fixture(scope="module")
def settings(briggs_rural, rural_exponents):
    """Briggs rural sigmas with plume depletion at the short-vegetation velocity 0.02 m/s."""
    return DispersionSettings(
        scheme=briggs_rural, wind_exponents=rural_exponents, depletion_velocity_m_s=0.02
    )


def _grid(n):
    """Cell-centre coordinates of an n x n grid of CELL_M cells, west 0, north n CELL_M."""
    x = (np.arange(n) + 0.5) * CELL_M
    y = n * CELL_M - (np.arange(n) + 0.5) * CELL_M
    return np.meshgrid(x, y)


def _direct(gx, gy, xs, ys, qs, elements, weather, settings):
    """The direct per-source sum at the true positions [g m-3]."""
    return sum(
        q * offset_concentration_g_m3_per_g_s(gx - x, gy - y, elements, weather, settings)
        for x, y, q in zip(xs, ys, qs)
    )


def _close(actual, expected, rtol):
    """assert_allclose with an absolute floor of 1e-12 of the largest expected value."""
    assert_allclose(actual, expected, rtol=rtol, atol=1e-12 * np.max(np.abs(expected)))


def test_release_class_rounds_height_and_footprint():
    """Heights go to the nearest 0.5 m; footprint sides to the sqrt(2) ladder through 10 m."""
    assert release_class("point", 5.2) == ReleaseClass("point", 5.0)
    assert release_class("point", 5.3).release_height_m == 5.5
    side = release_class("volume", 4.0, 30.0 * 30.0).footprint_side_m
    assert side == pytest.approx(20 * np.sqrt(2), rel=1e-6)  # 30 m is nearest 28.28 on the ladder
    assert release_class("volume", 4.0, 100.0).footprint_side_m == pytest.approx(10.0)
    with pytest.raises(ValueError, match="footprint"):
        release_class("volume", 4.0, 0.0)
    with pytest.raises(ValueError, match="kind"):
        release_class("area", 4.0, 10.0)


def test_batch_independent_values(weather, settings):
    """A receptor's value is the same alone or in any batch (fixed profile nodes)."""
    elements = release_class("volume", 4.0, 900.0).elements()
    x = np.array([150.0, -900.0, 3000.0, 40.0])
    y = np.array([-20.0, 700.0, 2500.0, 5.0])
    together = offset_concentration_g_m3_per_g_s(x, y, elements, weather, settings)
    for i in range(x.size):
        alone = offset_concentration_g_m3_per_g_s(
            x[i : i + 1], y[i : i + 1], elements, weather, settings
        )
        assert_allclose(alone, together[i], rtol=1e-14)  # cross-check: same per-receptor ops


@pytest.mark.parametrize(
    "cls",
    [ReleaseClass("point", 5.0), ReleaseClass("point", 0.0), ReleaseClass("volume", 4.0, 28.0)],
)
def test_radial_kernel_equals_engine_at_every_offset(cls, weather, settings):
    """Centre-line profiles assembled in angle give the engine's value at every offset."""
    direct = unit_kernel(cls.elements(), weather, settings, CELL_M, 30, 25, method="direct")
    radial = unit_kernel(cls.elements(), weather, settings, CELL_M, 30, 25, method="radial")
    assert radial.values.shape == (61, 51)
    assert np.isfinite(radial.values).all() and (radial.values >= 0).all()
    # cross-check: the same sums of the same terms in another order (rounding only)
    assert_allclose(radial.values, direct.values, rtol=1e-12)


def test_shared_lattice_gives_the_same_kernel(weather, settings):
    """A lattice built once and shared gives the kernel a fresh one gives (identical)."""
    lattice = offset_lattice(20, 20, CELL_M, weather)
    cls = ReleaseClass("point", 6.0)
    shared = unit_kernel(cls.elements(), weather, settings, CELL_M, 20, 20, lattice=lattice)
    fresh = unit_kernel(cls.elements(), weather, settings, CELL_M, 20, 20)
    assert np.array_equal(shared.values, fresh.values)
    with pytest.raises(ValueError, match="lattice"):
        unit_kernel(cls.elements(), weather, settings, CELL_M, 10, 20, lattice=lattice)


def test_convolution_equals_direct_sum_on_cell_centres(weather, settings):
    """Sources on cell centres (nothing snapped): FFT convolution = direct sum, 1e-9."""
    n = 60
    gx, gy = _grid(n)
    rng = np.random.default_rng(5)
    rows, cols = rng.integers(0, n, 12), rng.integers(0, n, 12)
    xs, ys, qs = gx[0, cols], gy[rows, 0], rng.uniform(0.01, 0.3, 12)
    for cls in (ReleaseClass("point", 6.0), ReleaseClass("volume", 4.0, 40.0)):
        kernel = unit_kernel(cls.elements(), weather, settings, CELL_M, n - 1, n - 1)
        placed = place_on_cells(xs, ys, qs, 0.0, n * CELL_M, CELL_M, n, n)
        assert placed.values.size == 12  # bilinear weight 1 on the centre, none elsewhere
        conv = convolve_emissions(placed.raster(), kernel)
        direct = _direct(gx, gy, xs, ys, qs, cls.elements(), weather, settings)
        _close(conv, direct, rtol=1e-9)  # cross-check; FFT round-off only


def test_tiled_equals_in_memory(weather, settings):
    """Several tiles and source blocks (overlap-add) give the one-FFT field, rtol 1e-12."""
    n_rows, n_cols = 50, 43
    rng = np.random.default_rng(8)
    xs = rng.uniform(CELL_M, (n_cols - 1) * CELL_M, 30)
    ys = rng.uniform(CELL_M, (n_rows - 1) * CELL_M, 30)
    qs = rng.uniform(0.01, 0.5, 30)
    cls = ReleaseClass("point", 4.0)
    kernel = unit_kernel(cls.elements(), weather, settings, CELL_M, n_rows - 1, n_cols - 1)
    placed = place_on_cells(xs, ys, qs, 0.0, n_rows * CELL_M, CELL_M, n_rows, n_cols)
    whole = tile_concentration(placed, kernel, (0, n_rows), (0, n_cols))
    assert_allclose(whole, convolve_emissions(placed.raster(), kernel), rtol=1e-12)
    tiled = np.zeros((n_rows, n_cols))
    for r0 in range(0, n_rows, 16):
        for c0 in range(0, n_cols, 16):
            rr, cc = (r0, min(r0 + 16, n_rows)), (c0, min(c0 + 16, n_cols))
            tiled[rr[0] : rr[1], cc[0] : cc[1]] = tile_concentration(placed, kernel, rr, cc, 16, 16)
    # cross-check: the same sum split by blocks of sources; FFT round-off relative to the peak
    assert_allclose(tiled, whole, rtol=1e-12, atol=1e-14 * whole.max())


def test_reach_truncates_kernel_and_skips_far_blocks(weather, settings):
    """With a reach, cells beyond it get nothing from a source; tiles equal the whole grid."""
    n = 40
    reach_m = 1200.0
    half = kernel_half_size(n, n, CELL_M, reach_m)
    assert half == (12, 12)
    cls = ReleaseClass("point", 5.0)
    kernel = unit_kernel(cls.elements(), weather, settings, CELL_M, *half, reach_m=reach_m)
    placed = place_on_cells([550.0], [3450.0], [1.0], 0.0, n * CELL_M, CELL_M, n, n)
    whole = tile_concentration(placed, kernel, (0, n), (0, n))
    gx, gy = _grid(n)
    distance_m = np.hypot(gx - 550.0, gy - 3450.0)
    far = distance_m > reach_m + 1.0
    assert (whole[far] <= 1e-14 * whole.max()).all()  # zero but for FFT round-off
    assert (whole[~far & (distance_m >= CELL_M)] > 1e-6 * whole.max()).all()
    tiled = np.block(
        [
            [
                tile_concentration(placed, kernel, (r, r + 10), (c, c + 10), 10, 10)
                for c in range(0, n, 10)
            ]
            for r in range(0, n, 10)
        ]
    )
    assert_allclose(tiled, whole, rtol=1e-12, atol=1e-14 * whole.max())


def test_bilinear_placement_keeps_total_and_centroid():
    """Bilinear weights: the placed emissions sum to the source and have its centroid."""
    placed = place_on_cells([437.0], [512.0], [2.0], 0.0, 1000.0, CELL_M, 10, 10)
    assert placed.values.sum() == pytest.approx(2.0, rel=1e-15)  # conservation
    x = (placed.cols + 0.5) * CELL_M
    y = 1000.0 - (placed.rows + 0.5) * CELL_M
    assert np.sum(placed.values * x) / 2.0 == pytest.approx(437.0, rel=1e-12)
    assert np.sum(placed.values * y) / 2.0 == pytest.approx(512.0, rel=1e-12)
    nearest = place_on_cells([437.0], [512.0], [2.0], 0.0, 1000.0, CELL_M, 10, 10, "nearest")
    assert (nearest.rows[0], nearest.cols[0]) == (4, 4)
    with pytest.raises(ValueError, match="outside"):
        place_on_cells([20.0], [512.0], [1.0], 0.0, 1000.0, CELL_M, 10, 10)


@pytest.mark.parametrize(
    "cls",
    [
        ReleaseClass("point", 3.0),
        ReleaseClass("point", 8.0),
        ReleaseClass("volume", 4.0, 28.284271),
    ],
)
def test_bilinear_placement_error_falls_as_one_over_distance(cls, weather, settings):
    """One source between centres: error vs the direct sum at its true position, by distance.

    Measured (12 random sub-cell positions, point 3-10 m and volume classes, 25 and 100 m
    cells): bilinear at most 8.2 % beyond 3 cells, 1.6 % beyond 10, 0.74 % beyond 20; nearest
    centre 44 %, 14 %, 7.5 %. With the 10-cell near-field correction the window is exact and
    1.4 % is left just outside it. Bounds here carry ~20 % head-room on those figures.
    """
    n = 70
    gx, gy = _grid(n)
    elements = cls.elements()
    kernel = unit_kernel(elements, weather, settings, CELL_M, n - 1, n - 1)
    rng = np.random.default_rng(2)
    for _ in range(3):
        x = gx[0, 35] + rng.uniform(-50, 50)
        y = gy[35, 0] + rng.uniform(-50, 50)
        direct = _direct(gx, gy, [x], [y], [1.0], elements, weather, settings)
        cells = np.hypot(gx - x, gy - y) / CELL_M
        floor = 1e-9 * direct.max()

        def error(field, direct=direct, floor=floor):
            return np.abs(field - direct) / np.maximum(direct, floor)

        bilinear = place_on_cells([x], [y], [1.0], 0.0, n * CELL_M, CELL_M, n, n)
        plain = error(tile_concentration(bilinear, kernel, (0, n), (0, n)))
        assert plain[cells >= 3].max() < 0.10
        assert plain[cells >= 10].max() < 0.02
        assert plain[cells >= 20].max() < 0.009
        nearest = place_on_cells([x], [y], [1.0], 0.0, n * CELL_M, CELL_M, n, n, "nearest")
        worse = error(tile_concentration(nearest, kernel, (0, n), (0, n)))
        assert worse[cells >= 10].max() > plain[cells >= 10].max()  # first order, not second
        correction = near_field_correction(
            [x], [y], [1.0], bilinear, kernel, elements, weather, settings, 0.0, n * CELL_M, 10
        )
        assert correction.values.size == 400  # the 20 x 20 cells around the source
        corrected = error(
            tile_concentration(bilinear, kernel, (0, n), (0, n), correction=correction)
        )
        window = np.zeros((n, n), bool)
        window[correction.rows, correction.cols] = True
        assert corrected[window].max() < 1e-9  # cross-check: the direct sum, FFT round-off only
        assert corrected.max() < 0.017


def test_near_field_correction_of_many_sources(weather, settings):
    """Windows covering the grid make the field the direct sum everywhere, in any batch size."""
    n = 40
    gx, gy = _grid(n)
    rng = np.random.default_rng(4)
    xs = rng.uniform(800, 3200, 6)
    ys = rng.uniform(800, 3200, 6)
    qs = rng.uniform(0.05, 0.2, 6)
    cls = ReleaseClass("volume", 5.0, 40.0)
    kernel = unit_kernel(cls.elements(), weather, settings, CELL_M, n - 1, n - 1)
    placed = place_on_cells(xs, ys, qs, 0.0, n * CELL_M, CELL_M, n, n)
    one_batch = near_field_correction(
        xs, ys, qs, placed, kernel, cls.elements(), weather, settings, 0.0, n * CELL_M, n
    )
    small_batches = near_field_correction(
        xs,
        ys,
        qs,
        placed,
        kernel,
        cls.elements(),
        weather,
        settings,
        0.0,
        n * CELL_M,
        n,
        sources_per_batch=2,
    )
    assert_allclose(small_batches.raster(), one_batch.raster(), rtol=1e-14, atol=0)
    field = tile_concentration(placed, kernel, (0, n), (0, n), correction=one_batch)
    direct = _direct(gx, gy, xs, ys, qs, cls.elements(), weather, settings)
    assert one_batch.values.size == 6 * n * n  # every window is the whole grid
    _close(field, direct, rtol=1e-9)  # cross-check: the direct sum at the true positions


def test_convolution_is_linear_in_emission(weather, settings):
    """Doubling every emission doubles the field (linearity), and the field is never negative."""
    n = 30
    cls = ReleaseClass("point", 3.0)
    kernel = unit_kernel(cls.elements(), weather, settings, CELL_M, n - 1, n - 1)
    e = np.zeros((n, n))
    e[5, 7], e[20, 11] = 0.1, 0.3
    one = convolve_emissions(e, kernel)
    assert (one >= 0).all()
    assert_allclose(convolve_emissions(2 * e, kernel), 2 * one, rtol=1e-12, atol=0)


def test_uniform_weather_kernel_is_symmetric(settings):
    """With the same frequency in every sector, the kernel is the same at +-dx and +-dy."""
    freq = np.zeros((8, 1, 6))
    freq[:, 0, 3] = 1.0 / 8  # neutral (D), 5 m/s, every direction alike
    weather = WeatherClasses(np.arange(8) * 45.0, np.array([5.0]), freq)
    kernel = unit_kernel(ReleaseClass("point", 5.0).elements(), weather, settings, CELL_M, 9, 9)
    v = kernel.values
    assert_allclose(v, v[::-1, :], rtol=1e-12)  # analytic: no direction is preferred
    assert_allclose(v, v[:, ::-1], rtol=1e-12)
    assert_allclose(v, v.T, rtol=1e-12)


def test_radial_kernel_from_interpolated_profiles_matches_direct():
    """A large kernel (profiles interpolated in log distance) equals the engine within 5e-5.

    Cross-check: the centre-line profiles are evaluated on 4,096 log-spaced distances and
    interpolated linearly in log distance to the lattice's distinct distances; measured error
    1.8e-5 relative (where the field exceeds 1e-9 of its peak), largest next to the source.
    """
    from siting.dispersion.inputs import DispersionSettings, ReleaseElement, WeatherClasses
    from siting.dispersion.kernels import unit_kernel
    from siting.readers.tables import load_dispersion, sigma_scheme, wind_exponents

    table = load_dispersion()
    settings = DispersionSettings(
        sigma_scheme(table, "rural"), wind_exponents(table, "rural"), depletion_velocity_m_s=0.02
    )
    rng = np.random.default_rng(0)
    freq = rng.random((12, 6, 6))
    weather = WeatherClasses(
        np.arange(12) * 30.0, np.array([1.0, 2.0, 3.5, 5.0, 7.0, 10.0]), freq / freq.sum()
    )
    house = [ReleaseElement(0, 0, 6.0, sigma_y0_m=5.0, sigma_z0_m=2.8, min_distance_m=10.0)]
    radial = unit_kernel(house, weather, settings, 100.0, 120, 120, method="radial").values
    direct = unit_kernel(house, weather, settings, 100.0, 120, 120, method="direct").values
    shown = direct > direct.max() * 1e-9
    assert (np.abs(radial - direct)[shown] / direct[shown]).max() < 5e-5
