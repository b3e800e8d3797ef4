"""The files of a screening run's [[option]] tables: options.csv and difference_<option>.tif.

Written by :func:`siting.output.screen.write_outputs` into its staging folder, beside the
base's files, when the scenario has options.
"""

from __future__ import annotations

from pathlib import Path

import pandas as pd

from siting.output.geotiff import write_geotiff
from siting.output.tables import write_csv
from siting.presentation.report_options import installation_emission_kg_yr

#: options.csv's columns after the sites' own: the change against the base.
CHANGE_COLUMNS = [
    "change_conc_max_ug_m3",
    "change_dep_max_kg_n_ha_yr",
    "change_pct_level",
    "change_pct_load",
    "change_basis",
]


def difference_file(option: str) -> str:
    """The file an option's deposition difference is written to.

    Parameters
    ----------
    option : str
        The option's name (letters, digits, ``_`` and ``-`` only: the scenario checks it).

    Returns
    -------
    str
        ``difference_<option>.tif``.
    """
    return f"difference_{option}.tif"


def options_csv_table(options, site_columns: list[str]) -> pd.DataFrame:
    """options.csv as written: ``option``, the sites.csv columns, then the change columns.

    Parameters
    ----------
    options : OptionRuns
        The run's options (:class:`siting.runs.screening_options.OptionRuns`).
    site_columns : list of str
        sites.csv's columns, in its order.

    Returns
    -------
    pandas.DataFrame
        One row per site and option, the base first.
    """
    table = options.table
    columns = ["option", *[c for c in site_columns if c in table], *CHANGE_COLUMNS]
    return pd.DataFrame(table[[c for c in columns if c in table]])


def write_option_files(
    result, folder: Path, site_columns: list[str]
) -> tuple[list[dict], pd.DataFrame]:
    """options.csv and one difference_<option>.tif per option, into ``folder``.

    Parameters
    ----------
    result : ScreenResult
        A screening run with options (``result.options``).
    folder : Path
        The (staging) output folder.
    site_columns : list of str
        sites.csv's columns, in its order.

    Returns
    -------
    records : list of dict
        What run.json records of each option: name, description, changes in words, its
        installation's emission [kg NH3 yr-1] and its difference file.
    table : pandas.DataFrame
        options.csv as written.
    """
    options = result.options
    table = options_csv_table(options, site_columns)
    write_csv(table, folder / "options.csv")
    for name, difference in options.differences.items():
        write_geotiff(
            folder / difference_file(name),
            result.grid,
            difference,
            f"dry deposition of N from NH3, process contribution: option {name} minus the base "
            "(screening estimate)",
            "kg N/ha/yr",
        )
    records = [
        {
            "name": name,
            "description": options.descriptions[name],
            "changes": options.changes[name],
            "installation_nh3_kg_yr": round(installation_emission_kg_yr(run.sources), 3),
            "difference_file": difference_file(name),
        }
        for name, run in options.runs.items()
    ]
    return records, table
