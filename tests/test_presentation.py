"""Tests of siting.presentation.formats: number formatting and the deposition classes."""

from __future__ import annotations

import numpy as np
import pytest

from siting.presentation.formats import deposition_class_edges, format_for_column, format_number


def test_class_edges_follow_the_data_range():
    """Class edges come from the 1-3-10 series, topped by the first edge above the maximum."""
    edges = deposition_class_edges(np.array([[0.5, 20.0], [np.nan, 1.0]]))
    np.testing.assert_allclose(edges, [0.01, 0.03, 0.1, 0.3, 1, 3, 10, 30])  # analytic
    assert deposition_class_edges(np.full((2, 2), np.nan))[-1] == pytest.approx(30.0)


def test_format_for_column_follows_the_unit_suffix():
    """Precision follows what the column measures (common practice, no source)."""
    assert format_for_column(500123.4, "x_m") == "500123.4"  # no 3-digit rounding, no grouping
    assert format_for_column(5800000, "y") == "5800000.0"
    assert format_for_column(2400.0, "places") == "2400"
    assert format_for_column(0.0214079, "emission_g_s") == "0.02141"
    assert format_for_column(675.12, "nh3_kg_yr") == "675.1"
    assert format_for_column(6751.2, "nh3_unabated_kg_yr") == "6751"
    assert format_for_column(5.09813, "pc_pct_level") == "5.1"
    assert format_for_column(4, "threshold_percent") == "4.0"
    assert format_for_column(0.042, "incomb_pct_load") == "0.04"  # small, not shown as 0.0
    assert format_for_column(0.050981, "pc_conc_max_ug_m3") == "0.051"
    assert format_for_column(2.2002, "pc_dep_max_kg_n_ha_yr") == "2.2"
    assert format_for_column(57795, "receptors") == "57795"  # integers in full
    assert format_for_column(np.nan, "x_m") == "n/a"
    assert format_for_column("70-99", "reduction_range_percent") == "70-99"


def test_format_number_significant_digits():
    """format_number keeps 3 significant digits, adds the unit and marks missing values."""
    assert format_number(0.012345, "kg N/ha/yr") == "0.0123 kg N/ha/yr"
    assert format_number(1234.5) == "1230"
    assert format_number(np.nan, "%") == "n/a"
    assert format_number(0.0) == "0"
