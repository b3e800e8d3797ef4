"""Synthetic site tables shared by the report and figure tests (invented values).

Three of the four names are hostile (script, template-literal and image-error injections), so
every writer that shows site names is tested against them.
"""

import numpy as np
import pandas as pd

NAMES = [
    "<script>alert(1)</script>",
    "a`b${alert(1)}\\c",
    "<img src=x onerror=alert(1)>",
    "Plain Moor",
]


def hostile_sites() -> pd.DataFrame:
    """Four sites, three with hostile names, one per verdict and an unknown one."""
    return pd.DataFrame(
        {
            "site_id": ["S1", "S2", "S3", "S4"],
            "name": NAMES,
            "designation": ["SAC", "<b>SSSI</b>", "local", "SPA"],
            "habitat": ["raised bog", "oak woodland", "heath", "dune grassland"],
            "critical_level_ug_m3": [1.0, 1.0, 3.0, 3.0],
            "critical_load_used_kg_n_ha_yr": [5.0, 10.0, 10.0, 8.0],
            "pc_conc_max_ug_m3": [1.234, 0.008, np.nan, 0.05],
            "pc_pct_level": [123.4, 0.8, np.nan, 1.67],
            "pc_dep_max_kg_n_ha_yr": [12.5, 0.04, np.nan, 0.39],
            "pc_pct_load": [250.0, 0.4, np.nan, 4.9],
            "threshold_percent": [1.0, 1.0, 100.0, 1.0],
            "verdict": ["above threshold", "below threshold", "not assessed", "above threshold"],
            "distance_m": [350.0, 900.0, 1500.0, 600.0],
        }
    )
