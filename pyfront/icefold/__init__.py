"""icefold from Python: every equilibrium climate of a planet in a
zonal-mean energy-balance model, as xarray Datasets.

Each function runs the command of the same name exactly as the command
line does (same scenario, validation, computation and tables) and returns
its tables as an ``xarray.Dataset`` with CF-style names, units and
attributes; the command's ``summary.json`` is in ``ds.attrs["summary"]``
(a JSON string) and its printed report in ``ds.attrs["report"]``.
``to_files(ds, out)`` writes exactly the files the command writes.

Scenarios: ``scenario`` is a path (or None for the built-in default);
overrides use the dotted names of ``--set``, as a dict or as keyword
arguments (``icefold.trace(**{"orbit.obliquity": 40})``).

Units (also in each variable's ``units`` attribute): temperatures in °C
(names ending ``_c``), ice edges and latitudes in degrees north (``_deg``),
fluxes in W m-2 (``orbit_flux``, ``_wm2``), fractions of area or year in 1,
times in years (``_yr``, ``time_years``), CO2 in ppm; a residual is in
W m-2 for equilibria and in K (W yr m-2 with sea ice) for periodic
climates (``summary.json`` ``residual``).

Errors: bad input raises ``ValueError`` with the command line's message
(naming the field, its value and the allowed range); a failed computation
raises ``icefold.ComputationError``; Ctrl-C interrupts a long call.
"""

from __future__ import annotations

import csv
import io
import json
import os
import weakref
from typing import Any, Dict, Iterable, List, Mapping, Optional, Tuple, Union

import numpy as np
import xarray as xr

from ._native import ComputationError
from ._native import publish as _publish
from ._native import read_netcdf as _read_netcdf
from ._native import run as _run
from ._native import version as _version

__all__ = [
    "ComputationError",
    "check",
    "solve",
    "trace",
    "map",
    "periodic",
    "run",
    "sun",
    "thermostat",
    "to_files",
    "to_netcdf",
    "load",
    "Scenario",
    "__version__",
]

__version__ = _version()

PathLike = Union[str, "os.PathLike[str]", "Scenario", None]

# CF-style units of the columns the commands write, by name
_UNITS = {
    "latitude_deg": ("degrees_north", "latitude"),
    "global_mean_temperature_c": ("degC", None),
    "temperature_c": ("degC", None),
    "ice_area_fraction": ("1", None),
    "habitable_fraction": ("1", None),
    "ice_edge_north_deg": ("degrees_north", None),
    "ice_edge_south_deg": ("degrees_north", None),
    "ice_edge_deg": ("degrees_north", None),
    "residual": (None, None),
    "residual_wm2": ("W m-2", None),
    "residual_k": ("K", None),
    "jump_time_yr": ("year", None),
    "period_yr": ("year", None),
    "snowball_yr": ("year", None),
    "time_yr": ("year", None),
    "co2_ppm": ("1e-6", None),
    "co2_min_ppm": ("1e-6", None),
    "co2_max_ppm": ("1e-6", None),
    "outgassing_bar_per_gyr": ("bar Gyr-1", None),
    "weathering_bar_per_gyr": ("bar Gyr-1", None),
    "orbit.flux": ("W m-2", None),
    "orbit.obliquity": ("degree", None),
    "radiation.co2_ppm": ("1e-6", None),
    "radiation.forcing": ("W m-2", None),
    "insolation_wm2": ("W m-2", None),
}


def _value(v: Any) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, (int, float, np.integer, np.floating)):
        return repr(float(v)) if isinstance(v, (float, np.floating)) else str(int(v))
    return json.dumps(str(v))


def _sets(sets: Optional[Mapping[str, Any]], overrides: Mapping[str, Any]) -> List[str]:
    merged: Dict[str, Any] = dict(sets or {})
    merged.update(overrides)
    return [f"{k}={_value(v)}" for k, v in merged.items()]


class Scenario:
    """A scenario: a file (or the built-in default) with overrides by the
    dotted names of ``--set``, validated when made (ValueError naming a bad
    field). Every function takes one as its ``scenario``; overrides given
    to a call are applied on top of its own."""

    def __init__(self, path: PathLike = None, sets: Optional[Mapping[str, Any]] = None, **overrides: Any):
        self.path = None if path is None else os.fspath(path)
        self.sets: Dict[str, Any] = dict(sets or {})
        self.sets.update(overrides)
        #: the scenario as TOML, every default filled in
        self.toml = check(self.path, self.sets)

    def __repr__(self) -> str:
        return f"icefold.Scenario({self.path!r}, {self.sets!r})"


def load(path: PathLike = None, sets: Optional[Mapping[str, Any]] = None, **overrides: Any) -> Scenario:
    """A validated :class:`Scenario` from a file (None: the built-in
    default), a dict of keys and/or keyword overrides (dotted names)."""
    return Scenario(path, sets, **overrides)


def _call(
    command: str,
    scenario: PathLike,
    sets: Optional[Mapping[str, Any]],
    overrides: Mapping[str, Any],
    options: Iterable[Tuple[str, Any]] = (),
    figures: Union[bool, str] = False,
    progress: bool = False,
) -> Tuple[str, Dict[str, bytes]]:
    # figures: True (all), False (none) or the name of `--figures`
    if isinstance(figures, str):
        options = [*options, ("figures", figures)]
        figures = True
    opts = [(k, _value(v) if not isinstance(v, str) else v) for k, v in options if v is not None]
    opts = [(k, v.strip('"') if isinstance(v, str) else v) for k, v in opts]
    if isinstance(scenario, Scenario):
        base = dict(scenario.sets)
        base.update(sets or {})
        sets, path = base, scenario.path
    else:
        path = None if scenario is None else os.fspath(scenario)
    text, files = _run(
        command, path, _sets(sets, overrides), opts, figures=figures, quiet=not progress
    )
    return text, dict(files)


def _column(values: List[str]) -> np.ndarray:
    """A CSV column as the narrowest array: bool, int64, float64 or str
    (Python's float() of the shortest round-trip decimals: the doubles the
    command held, bit for bit)."""
    if values and all(v in ("true", "false") for v in values):
        return np.array([v == "true" for v in values])
    if any(v in ("true", "false") for v in values) and all(v in ("true", "false", "") for v in values):
        # a yes/no that does not apply everywhere: 1, 0, NaN where empty
        return np.array([{"true": 1.0, "false": 0.0}.get(v, np.nan) for v in values])
    try:
        return np.array([int(v) for v in values], dtype=np.int64)
    except ValueError:
        pass
    try:
        # an empty cell is a value that could not be computed
        return np.array([float(v) if v != "" else np.nan for v in values], dtype=np.float64)
    except ValueError:
        return np.array(values, dtype=str)


def _table(data: bytes) -> Tuple[List[str], Dict[str, np.ndarray]]:
    rows = list(csv.reader(io.StringIO(data.decode())))
    header, body = rows[0], rows[1:]
    cols = {h: _column([r[i] for r in body]) for i, h in enumerate(header)}
    return header, cols


def _name(column: str) -> str:
    # dotted scenario keys become valid variable names
    return column.replace(".", "_")


def _add(out: Dict[str, xr.Variable], dim: str, cols: Dict[str, np.ndarray], prefix: str = "") -> None:
    for c, v in cols.items():
        units, standard = _UNITS.get(c, (None, None))
        attrs = {"long_name": c.replace("_", " ")}
        if units:
            attrs["units"] = units
        if standard:
            attrs["standard_name"] = standard
        out[prefix + _name(c)] = xr.Variable((dim,), v, attrs)


def _netcdf(data: bytes) -> xr.Dataset:
    """A NetCDF-3 file a command wrote, decoded as xarray.open_dataset
    decodes it (the _FillValue cells become NaN)."""
    dims, variables, globals_ = _read_netcdf(data)
    size = dict(dims)
    out = {}
    for name, vdims, code, values, attrs in variables:
        shape = tuple(size[d] for d in vdims)
        array = np.array(values, dtype=np.dtype(code)).reshape(shape)
        out[name] = xr.Variable(tuple(vdims), array, {k: _attr(v) for k, v in attrs})
    ds = xr.Dataset(out, attrs={k: _attr(v) for k, v in globals_})
    return xr.decode_cf(ds)


def _attr(v: Any) -> Any:
    if isinstance(v, list):
        return v[0] if len(v) == 1 else np.array(v)
    return v


def _dataset(
    command: str,
    text: str,
    files: Dict[str, bytes],
    tables: Dict[str, str],
    grid: Optional[str] = None,
) -> xr.Dataset:
    """tables: file name -> dimension name; grid: a NetCDF file of the
    command whose variables (on their own dimensions) come first."""
    variables: Dict[str, xr.Variable] = {}
    for fname, dim in tables.items():
        if fname in files:
            _, cols = _table(files[fname])
            # beside a grid every table is prefixed (its columns would
            # otherwise collide with the grid's coordinates)
            bare = grid is None and dim in ("point", "latitude", "run")
            _add(variables, dim, cols, "" if bare else f"{dim}_")
    # one call (assigning variables one by one is slow)
    grid_attrs: Dict[str, Any] = {}
    if grid is not None and grid in files:
        nc = _netcdf(files[grid])
        grid_attrs = dict(nc.attrs)
        ds = nc.assign(variables)
    else:
        ds = xr.Dataset(variables)
    summary = files.get("summary.json")
    ds.attrs = {f"file_{k}": v for k, v in grid_attrs.items()}
    ds.attrs["title"] = f"icefold {command}"
    ds.attrs["source"] = f"icefold {__version__}"
    ds.attrs["Conventions"] = "CF-1.8"
    ds.attrs["report"] = text
    if summary is not None:
        ds.attrs["summary"] = summary.decode()
    if "scenario.toml" in files:
        ds.attrs["scenario"] = files["scenario.toml"].decode()
    ds.attrs["_icefold_command"] = command
    _keep(ds, files)
    return ds


# the exact files of each returned Dataset, for to_files: kept while the
# Dataset lives (a weak reference; the entry goes with the Dataset)
_FILES: Dict[int, Tuple["weakref.ref[xr.Dataset]", Dict[str, bytes]]] = {}


def _keep(ds: xr.Dataset, files: Dict[str, bytes]) -> None:
    _FILES[id(ds)] = (weakref.ref(ds), files)
    weakref.finalize(ds, _FILES.pop, id(ds), None)


def to_files(ds: xr.Dataset, out: PathLike) -> List[str]:
    """Writes into the directory ``out`` exactly the files the command that
    made ``ds`` writes into ``--out`` (tables, summary, scenario, NetCDF;
    the figures only if the call asked for them), published as the command
    publishes them: all together or not at all, replacing an earlier
    icefold output set there; a directory holding anything else is refused
    (ValueError). Returns the paths written."""
    entry = _FILES.get(id(ds))
    if entry is None or entry[0]() is not ds:
        raise ValueError("to_files: this Dataset was not returned by an icefold call")
    return _publish(os.fspath(out), list(entry[1].items()))


#: the same as :func:`to_files` (the command's files include its NetCDF files)
to_netcdf = to_files


def check(scenario: PathLike = None, sets: Optional[Mapping[str, Any]] = None, **overrides: Any) -> str:
    """Validates a scenario with its overrides; returns it as TOML with
    every default filled in. Raises ValueError naming a bad field."""
    text, _ = _call("check", scenario, sets, overrides)
    return text


def solve(
    scenario: PathLike = None,
    sets: Optional[Mapping[str, Any]] = None,
    *,
    figures: Union[bool, str] = False,
    **overrides: Any,
) -> xr.Dataset:
    """Every equilibrium from the standard starts (``icefold solve``):
    ``profile.csv`` along ``point`` (one row per equilibrium and band)."""
    text, files = _call("solve", scenario, sets, overrides, figures=figures)
    return _dataset("solve", text, files, {"profile.csv": "point"})


def trace(
    scenario: PathLike = None,
    sets: Optional[Mapping[str, Any]] = None,
    *,
    vary: Optional[str] = None,
    start: Optional[float] = None,
    stop: Optional[float] = None,
    hierarchy: bool = False,
    figures: Union[bool, str] = False,
    progress: bool = False,
    **overrides: Any,
) -> xr.Dataset:
    """Every branch of equilibria in one parameter (``icefold trace``):
    the branch points along ``point`` with the traced parameter (e.g.
    ``orbit_flux``) as coordinate, the folds along ``fold`` (variables
    ``fold_*``); bistable windows and branch ends in ``attrs["summary"]``.
    ``start``/``stop`` are ``--from``/``--to``."""
    opts = [("vary", vary), ("from", start), ("to", stop)]
    if hierarchy:
        opts.append(("hierarchy", "true"))
    text, files = _call("trace", scenario, sets, overrides, opts, figures, progress)
    tables = (
        {"hierarchy.csv": "point", "hierarchy_folds.csv": "fold"}
        if hierarchy
        else {"branches.csv": "point", "folds.csv": "fold"}
    )
    ds = _dataset("trace", text, files, tables)
    key = json.loads(ds.attrs["summary"])["vary"]
    if _name(key) in ds:
        ds = ds.set_coords(_name(key))
        _keep(ds, files)
    ds.attrs["vary"] = key
    return ds


def map(
    scenario: PathLike = None,
    sets: Optional[Mapping[str, Any]] = None,
    *,
    across: Union[str, Iterable[str], None] = None,
    vary: Optional[str] = None,
    start: Optional[float] = None,
    stop: Optional[float] = None,
    cells: Optional[int] = None,
    threads: Optional[int] = None,
    fold_curves: Optional[bool] = None,
    hierarchy: bool = False,
    figures: Union[bool, str] = False,
    progress: bool = False,
    **overrides: Any,
) -> xr.Dataset:
    """A regime map (``icefold map``): the variables of ``map.nc`` on the
    (across, vary) grid (regime flag mask and count of stable climates per
    cell, each climate's state, temperature, ice edges and habitable
    fraction; its global attributes as ``file_*`` attributes), plus
    ``map.csv`` along ``point`` (variables ``point_*``) and the joined
    fold curves along ``boundary`` (``boundary_*``). ``across`` is ``KEY=FROM:TO:COUNT``,
    or a list of them for a map over several keys (the command's repeated
    ``--across``, the first slowest): ``map.nc`` then has one dimension per
    key. ``hierarchy=True`` is ``--hierarchy``: the same map in the annual-mean,
    seasonal and seasonal sea-ice models, ``map.nc``'s variables with a
    leading ``model`` dimension and ``point_model``/``boundary_model`` naming
    each row's model."""
    acrosses = [across] if across is None or isinstance(across, str) else list(across)
    opts = [("across", a) for a in acrosses] + [
        ("vary", vary),
        ("from", start),
        ("to", stop),
        ("cells", cells),
        ("threads", threads),
    ]
    # None: the command's default (on for annual-mean maps, off for seasonal)
    if fold_curves:
        opts.append(("fold-curves", "true"))
    elif fold_curves is not None:
        opts.append(("no-fold-curves", "true"))
    if hierarchy:
        opts.append(("hierarchy", "true"))
    text, files = _call("map", scenario, sets, overrides, opts, figures, progress)
    return _dataset(
        "map", text, files, {"map.csv": "point", "boundaries.csv": "boundary"}, grid="map.nc"
    )


def periodic(
    scenario: PathLike = None,
    sets: Optional[Mapping[str, Any]] = None,
    *,
    figures: Union[bool, str] = False,
    **overrides: Any,
) -> xr.Dataset:
    """Every periodic seasonal climate (``icefold periodic``): the
    variables of ``seasonal_cycle.nc`` (temperature, ice and means by day
    and latitude), the annual means along ``point`` (``point_*``), the
    seasonal cycle as a table along ``sample`` (``sample_*``), the ice
    edges along ``edge`` (``edge_*``)."""
    text, files = _call("periodic", scenario, sets, overrides, figures=figures)
    return _dataset(
        "periodic",
        text,
        files,
        {"annual_mean.csv": "point", "seasonal_cycle.csv": "sample", "ice_edges.csv": "edge"},
        grid="seasonal_cycle.nc",
    )


def run(
    scenario: PathLike = None,
    sets: Optional[Mapping[str, Any]] = None,
    *,
    years: int = 10,
    start: Optional[str] = None,
    **overrides: Any,
) -> xr.Dataset:
    """Time integration of the seasonal model (``icefold run``): the time
    series along ``time`` (``time_*``) and the final state along ``band``
    (``band_*``). ``start`` is ``--from``: "warm", "cold" or the path of a
    ``state.csv`` an earlier run wrote."""
    opts = [("years", years), ("from", None if start is None else os.fspath(start))]
    text, files = _call("run", scenario, sets, overrides, opts)
    return _dataset("run", text, files, {"timeseries.csv": "time", "state.csv": "band"})


def sun(
    scenario: PathLike = None,
    sets: Optional[Mapping[str, Any]] = None,
    *,
    figures: Union[bool, str] = False,
    **overrides: Any,
) -> xr.Dataset:
    """Daily-mean insolation over the year (``icefold sun``): along
    ``sample``; the annual mean along ``latitude``."""
    text, files = _call("sun", scenario, sets, overrides, figures=figures)
    return _dataset(
        "sun", text, files, {"insolation.csv": "sample", "annual_insolation.csv": "latitude"}
    )


def thermostat(
    scenario: PathLike = None,
    sets: Optional[Mapping[str, Any]] = None,
    *,
    outgassing: Union[float, str],
    co2: Optional[str] = None,
    cycle_at: Optional[float] = None,
    across: Optional[str] = None,
    threads: Optional[int] = None,
    figures: Union[bool, str] = False,
    progress: bool = False,
    **overrides: Any,
) -> xr.Dataset:
    """The carbonate-silicate thermostat (``icefold thermostat``): for each
    outgassing rate V (bar Gyr-1; a number, ``"FROM:TO:COUNT"`` or
    ``"FROM:TO:COUNT:log"``) whether the planet settles (CO2 in ppm,
    temperature in degC, stabilities) or cycles (period and time in snowball
    in years, CO2 and temperature ranges), along ``run`` with
    ``outgassing_bar_per_gyr`` as coordinate; one cycle's time series along
    ``cycle`` (``cycle_*``). ``co2`` is ``--co2 FROM:TO`` (ppm), ``cycle_at``
    ``--cycle-at V``. With ``across="KEY=FROM:TO:COUNT"`` (``--across``) one
    thermostat per value instead, the rows of ``thermostat_map.csv`` along
    ``cell`` (``cell_*``: the key and every column of a single run)."""
    opts = [
        ("outgassing", outgassing),
        ("co2", co2),
        ("cycle-at", cycle_at),
        ("across", across),
        ("threads", threads),
    ]
    text, files = _call("thermostat", scenario, sets, overrides, opts, figures, progress)
    ds = _dataset(
        "thermostat",
        text,
        files,
        {"thermostat.csv": "run", "cycle.csv": "cycle", "thermostat_map.csv": "cell"},
    )
    if "outgassing_bar_per_gyr" in ds:
        ds = ds.set_coords("outgassing_bar_per_gyr")
        _keep(ds, files)
    return ds
