"""CF NetCDF from a reanalysis -> the hourly rows of the site's grid point (read with xarray).

A reanalysis gives hourly fields on a latitude-longitude grid: the wind 10 m above ground as
its eastward and northward components, total cloud cover, cloud base height and 2 m
temperature. Each variable is found by its CF standard name (``eastward_wind``,
``northward_wind``, ``cloud_area_fraction``, ``air_temperature``), else by the short names
reanalyses use (``u10``, ``v10``, ``tcc``, ``cbh``, ``t2m``), else by a column map
(``columns = {u = "...", v = "...", ...}``). Its units are read from its ``units`` attribute
and converted (m s-1; cloud as a fraction 0..1 or %; cloud base in m; temperature in K or
deg C); units siting does not know are refused rather than guessed.

The site's values: the grid point nearest the site (default), or bilinear interpolation
between the four grid points around it (``grid_point = "bilinear"``; each component of the
wind is interpolated, then the direction and speed are made from them). Both are stated in
the summary with the grid point's position and its distance from the site.

* Times: CF time coordinates (``time`` or ``valid_time``) decoded by xarray; CF times carry no
  zone and reanalyses write UTC, so they are read as UTC. Every time must be on a whole hour.
* Anemometer height: the product's 10 m (the caller's ``anemometer_height_m``, 10 by default;
  a warning if another height is given for a NetCDF record).
* Wind: direction (meteorological convention, where the wind blows from) and speed from u
  and v (``physics/met_units.wind_from_components``).
* Cloud: the fraction as whole oktas by WMO's okta scale (``oktas_from_fraction``).
* Ceiling: the cloud base height [m] as feet; a missing cloud base (no cloud) is no ceiling.
* Missing values and quality: ``_FillValue`` and ``missing_value`` (masked by xarray), and
  values outside ``valid_min``/``valid_max``/``valid_range`` (CF conventions section 2.5.1),
  are missing; each is counted per variable. An ``expver`` dimension (final and preliminary
  data in one file) is reduced to the first version that has a value at each time.
"""

from __future__ import annotations

import io
from pathlib import Path

import numpy as np

from siting.errors import InputError
from siting.physics.met_units import feet_from_metres, oktas_from_fraction, wind_from_components
from siting.readers.hourly_columns import _check_increasing, _numeric_file

#: Each quantity's CF standard names, then short names (reanalysis usage; common practice).
_STANDARD_NAMES = {
    "u": ("eastward_wind",),
    "v": ("northward_wind",),
    "cloud": ("cloud_area_fraction",),
    "ceiling": ("cloud_base_altitude", "cloud_base_height"),
    "temperature": ("air_temperature",),
}
_SHORT_NAMES = {
    "u": ("u10", "u10m", "uas"),
    "v": ("v10", "v10m", "vas"),
    "cloud": ("tcc", "clt", "total_cloud_cover"),
    "ceiling": ("cbh", "cloud_base_height"),
    "temperature": ("t2m", "tas", "2t"),
}
_WIND_UNITS = {"m s-1", "m s**-1", "m/s", "m s^-1", "meter second-1", "m.s-1"}
_FRACTION_UNITS = {"1", "(0 - 1)", "0-1", "fraction", "", "dimensionless"}
_PERCENT_UNITS = {"%", "percent"}
_METRE_UNITS = {"m", "metre", "meter", "metres", "meters"}
_KELVIN_UNITS = {"K", "kelvin", "degK"}
_CELSIUS_UNITS = {"degC", "deg C", "°C", "C", "celsius", "degree_Celsius", "degrees_Celsius"}
_ZERO_CELSIUS_K = 273.15  # [K] (definition of the Celsius scale)


def read_netcdf_file(path: Path, data: bytes | None, latitude_deg, longitude_deg, source):
    """Read one reanalysis NetCDF file at the site's grid point.

    Parameters
    ----------
    path : Path
        The file (its name is used in messages).
    data : bytes, optional
        Its content (a gunzipped file); None opens the file where it lies, so that only the
        site's grid point is read from a file that may be larger than memory.
    latitude_deg, longitude_deg : float
        The site [deg].
    source : WeatherSource
        The column map (variable names) and the grid point rule.

    Returns
    -------
    _RawFile
        direction_deg, speed_m_s, cloud_oktas, ceiling_ft, temperature_c at the site's grid
        point, times in UTC, a row per time step; the source description gives the variables,
        the grid point, its distance from the site and the values counted missing.

    Raises
    ------
    InputError
        A file xarray cannot open, no wind components or no cloud cover, units not known, no
        time or latitude/longitude coordinate, the site outside the grid, times off the hour.
    """
    import xarray as xr

    name = path.name
    try:
        if data is None:
            with open(path, "rb") as handle:
                engine = _engine(handle.read(8))
            ds = xr.open_dataset(path, engine=engine, mask_and_scale=True)
        else:
            ds = xr.open_dataset(io.BytesIO(data), engine=_engine(data), mask_and_scale=True)
    except Exception as exc:  # noqa: BLE001 - any failure to open is the file's fault
        raise InputError(f"{name}: cannot be read as NetCDF: {exc}") from None
    with ds:
        found = _variables(name, ds, source.columns)
        time_name, lat_name, lon_name = _coordinates(name, ds, found["u"])
        site_lon = _grid_longitude(ds[lon_name].values, longitude_deg)
        _check_inside(name, ds, lat_name, lon_name, latitude_deg, site_lon, source.grid_point)
        point, grid_lat, grid_lon = _at_site(
            ds, found, lat_name, lon_name, latitude_deg, site_lon, source.grid_point
        )
        counted = {key: _values(name, ds[var], point[key], key) for key, var in found.items()}
        times = ds[time_name].values
    values, missing = {}, {}
    for key, (array, n_missing) in counted.items():
        values[key], missing[found[key]] = array, n_missing
    time_utc = _times(name, times)
    direction, speed = wind_from_components(values["u"], values["v"])
    # to 1e-6 deg and m/s, far below any product's precision: a speed of 3 m/s from u, v
    # stays 3 (not 2.9999999999999996) and falls in the class a station's 3.0 falls in
    direction, speed = np.round(direction, 6) % 360.0, np.round(speed, 6)
    columns = {
        "direction_deg": direction,
        "speed_m_s": speed,
        "cloud_oktas": oktas_from_fraction(values["cloud"]),
    }
    labels = {
        "direction_deg": f"wind direction from {found['u']}/{found['v']}",
        "speed_m_s": f"wind speed from {found['u']}/{found['v']}",
        "cloud_oktas": f"{found['cloud']} (as oktas)",
    }
    if "ceiling" in values:
        # no cloud base (no cloud) is an unlimited ceiling, inf (stability.py)
        columns["ceiling_ft"] = np.where(
            np.isfinite(values["ceiling"]), feet_from_metres(values["ceiling"]), np.inf
        )
        labels["ceiling_ft"] = f"{found['ceiling']} (as ft)"
    if "temperature" in values:
        columns["temperature_c"] = values["temperature"]
        labels["temperature_c"] = f"{found['temperature']} (as deg C)"
    from pyproj import Geod

    _, _, distance_m = Geod(ellps="WGS84").inv(longitude_deg, latitude_deg, grid_lon, grid_lat)
    rule = (
        "the nearest grid point"
        if source.grid_point == "nearest"
        else "bilinear interpolation between the four grid points around the site"
    )
    raw = _numeric_file(
        name,
        time_utc,
        columns,
        np.arange(1, time_utc.size + 1),
        labels=labels,
        row_word="time step",
        source={
            "format": "netcdf",
            "layout": "CF NetCDF (reanalysis grid), read with xarray",
            "variables": dict(found),
            "grid_point": source.grid_point,
            "grid_point_rule": rule,
            "grid_latitude_deg": float(grid_lat),
            "grid_longitude_deg": float(_east_west(grid_lon)),
            "distance_km": round(float(distance_m) / 1000.0, 2),
            "missing_codes": missing,
            "quality_flags": "_FillValue, missing_value and valid_min/max/range honoured",
            "anemometer_height_m": 10.0,
        },
    )
    _check_increasing(raw)
    return raw


def _engine(data: bytes) -> str:
    """xarray's engine: scipy for classic NetCDF, h5netcdf for NetCDF-4 (HDF5)."""
    return "h5netcdf" if data.startswith(b"\x89HDF") else "scipy"


def _variables(name: str, ds, columns: dict[str, str]) -> dict[str, str]:
    """Quantity -> variable name: by the column map, else CF standard name, else short name.

    u, v and cloud are needed (cloud for Turner's method); ceiling and temperature optional.
    """
    found: dict[str, str] = {}
    for key in _STANDARD_NAMES:
        if key in columns:
            if columns[key] not in ds.data_vars:
                raise InputError(
                    f"{name}: variable {columns[key]!r} (columns {key}) is not in the file; "
                    f"its variables: {', '.join(map(str, ds.data_vars))}"
                )
            found[key] = columns[key]
            continue
        by_standard = [
            v for v in ds.data_vars if ds[v].attrs.get("standard_name") in _STANDARD_NAMES[key]
        ]
        by_short = [v for v in ds.data_vars if str(v).lower() in _SHORT_NAMES[key]]
        # a cloud_area_fraction may be a layer's (low, medium, high): prefer the short name
        if key == "cloud" and by_short:
            by_standard = []
        candidates = by_standard or by_short
        if len(candidates) > 1:
            raise InputError(
                f"{name}: several variables could be the {key} ({', '.join(candidates)}); "
                f"name one with columns {key}=..."
            )
        if candidates:
            found[key] = str(candidates[0])
    needed = [k for k in ("u", "v", "cloud") if k not in found]
    if needed:
        raise InputError(
            f"{name}: no variable found for {', '.join(needed)} (u, v: the 10 m wind "
            "components; cloud: total cloud cover, which Turner's method needs); its "
            f"variables: {', '.join(map(str, ds.data_vars))}; name them with columns "
            "u=...,v=...,cloud=...",
            parameters=("columns",),
        )
    return found


def _coordinates(name: str, ds, u_name: str) -> tuple[str, str, str]:
    """The time, latitude and longitude coordinate names of the wind's variable."""
    dims = ds[u_name].dims
    time = next((d for d in dims if d in ("time", "valid_time", "t")), None)
    lat = next((d for d in dims if _is_axis(ds, d, "degrees_north", ("latitude", "lat"))), None)
    lon = next((d for d in dims if _is_axis(ds, d, "degrees_east", ("longitude", "lon"))), None)
    if time is None or lat is None or lon is None:
        raise InputError(
            f"{name}: {u_name} must have a time, a latitude and a longitude dimension (a "
            f"regular latitude-longitude grid); it has {', '.join(map(str, dims))}"
        )
    other = [d for d in dims if d not in (time, lat, lon, "expver")]
    if other:
        raise InputError(
            f"{name}: {u_name} has other dimension(s) {', '.join(map(str, other))}; give a "
            "file of one level (10 m wind, surface fields)"
        )
    return time, lat, lon


def _is_axis(ds, dim: str, units: str, names: tuple[str, ...]) -> bool:
    coord = ds[dim] if dim in ds.coords else None
    if coord is not None and str(coord.attrs.get("units", "")).startswith(units):
        return True
    return str(dim).lower() in names


def _grid_longitude(grid_lon: np.ndarray, longitude_deg: float) -> float:
    """The site's longitude in the grid's convention (0..360 when the grid runs past 180)."""
    return float(longitude_deg % 360.0) if np.nanmax(grid_lon) > 180.0 else float(longitude_deg)


def _east_west(lon: float) -> float:
    """A longitude as -180..180."""
    return float((lon + 180.0) % 360.0 - 180.0)


def _check_inside(name, ds, lat_name, lon_name, lat, lon, rule) -> None:
    """The site inside the grid (bilinear), or within half a grid step of it (nearest)."""
    for coord, value, what in ((lat_name, lat, "latitude"), (lon_name, lon, "longitude")):
        axis = np.asarray(ds[coord].values, dtype=float)
        half = 0.5 * float(np.abs(np.diff(axis)).max()) if axis.size > 1 else 0.0
        margin = half if rule == "nearest" else 0.0
        if not (axis.min() - margin <= value <= axis.max() + margin):
            raise InputError(
                f"{name}: the site's {what} {value:.4f} is outside the grid "
                f"({axis.min():.4f}..{axis.max():.4f}); give a file that covers the site"
            )
        if rule == "bilinear" and axis.size < 2:
            raise InputError(
                f"{name}: bilinear interpolation needs at least two grid points in {what}; "
                "use grid_point = nearest",
                parameters=("grid_point",),
            )


def _at_site(ds, found, lat_name, lon_name, lat, lon, rule):
    """Each variable's series at the site, and the grid point's latitude and longitude (the
    nearest grid point, whose distance the summary gives, also for bilinear)."""
    nearest = ds[[*found.values()]].sel({lat_name: lat, lon_name: lon}, method="nearest")
    grid_lat = float(nearest[lat_name].values)
    grid_lon = float(nearest[lon_name].values)
    if rule == "nearest":
        point = {key: nearest[var] for key, var in found.items()}
    else:
        around = ds[[*found.values()]].interp({lat_name: lat, lon_name: lon}, method="linear")
        point = {key: around[var] for key, var in found.items()}
    return point, grid_lat, grid_lon


def _values(name: str, variable, series, key: str) -> tuple[np.ndarray, int]:
    """One variable's series in siting's units, and how many values were missing (fill
    values, missing_value, outside the valid range, or NaN)."""
    if "expver" in series.dims:  # final and preliminary data: the first with a value
        # (fillna version by version: xarray's bfill needs bottleneck, not installed here)
        first = series.isel(expver=0, drop=True)
        for k in range(1, series.sizes["expver"]):
            first = first.fillna(series.isel(expver=k, drop=True))
        series = first
    values = np.asarray(series.values, dtype=float).reshape(-1)
    attrs = variable.attrs
    low, high = attrs.get("valid_min"), attrs.get("valid_max")
    if "valid_range" in attrs:
        low, high = attrs["valid_range"][0], attrs["valid_range"][1]
    low, high = (_unpacked(bound, variable.encoding) for bound in (low, high))
    outside = np.zeros(values.shape, dtype=bool)
    if low is not None:
        outside |= values < float(low)
    if high is not None:
        outside |= values > float(high)
    values = np.where(outside, np.nan, values)
    n_missing = int(np.isnan(values).sum())
    units = str(attrs.get("units", "")).strip()
    var = variable.name
    if key in ("u", "v"):
        _need_units(name, var, units, _WIND_UNITS, "m s-1")
        return values, n_missing
    if key == "cloud":
        if units in _PERCENT_UNITS:
            values = values / 100.0
        elif units not in _FRACTION_UNITS:
            raise InputError(
                f"{name}: {var} has units {units!r}; total cloud cover must be a fraction "
                "(units 1 or (0 - 1)) or %"
            )
        bad = np.isfinite(values) & ((values < -1e-6) | (values > 1 + 1e-6))
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise InputError(
                f"{name}, time step {i + 1}: {var} must be within 0..1 as a fraction, got "
                f"{values[i]:g}"
            )
        return np.clip(values, 0.0, 1.0), n_missing
    if key == "ceiling":
        _need_units(name, var, units, _METRE_UNITS, "m")
        # a missing cloud base is "no cloud base", not a missing hour: not counted
        return values, 0
    if units in _KELVIN_UNITS:
        return values - _ZERO_CELSIUS_K, n_missing
    _need_units(name, var, units, _CELSIUS_UNITS, "K or degC")
    return values, n_missing


def _unpacked(bound, encoding: dict):
    """A valid_min/max/range bound in the values' units. CF conventions section 8.1 (from
    memory) give a packed variable's bounds in the packed type, so an integer bound of a
    variable with scale_factor/add_offset is unpacked as xarray unpacked the values."""
    scale, offset = encoding.get("scale_factor"), encoding.get("add_offset")
    if bound is None or (scale is None and offset is None):
        return bound
    if np.asarray(bound).dtype.kind not in "iu":
        return bound  # a float bound: already in the values' units
    return float(bound) * float(1.0 if scale is None else scale) + float(offset or 0.0)


def _need_units(name: str, var: str, units: str, known: set[str], want: str) -> None:
    if units not in known:
        raise InputError(f"{name}: {var} has units {units!r}; siting reads it in {want}")


def _times(name: str, times: np.ndarray) -> np.ndarray:
    """CF times decoded by xarray -> datetime64[m] UTC; each on a whole hour."""
    if not np.issubdtype(np.asarray(times).dtype, np.datetime64):
        raise InputError(
            f"{name}: the time coordinate is not a CF time (units like 'hours since "
            "1900-01-01'); xarray could not decode it"
        )
    t = np.asarray(times, dtype="datetime64[s]")
    off = (t.astype(np.int64) % 3600) != 0
    if off.any():
        i = int(np.flatnonzero(off)[0])
        raise InputError(
            f"{name}, time step {i + 1}: {t[i]} is not on a whole hour; hourly records "
            "must be on the hour (times are not rounded)"
        )
    return t.astype("datetime64[m]")
