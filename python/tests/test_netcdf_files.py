"""The NetCDF files icefold writes open in xarray (scipy engine, no cftime)
without a single warning, and carry the CF metadata a user relies on.

Needs the release binary: build it first with `cargo build --release`.
Run with `python -m pytest python/tests` (needs xarray, scipy, pytest).
"""

import subprocess
import warnings
from pathlib import Path

import numpy as np
import pytest

xr = pytest.importorskip("xarray")
pytest.importorskip("scipy")

ROOT = Path(__file__).resolve().parents[2]
BINARY = ROOT / "target" / "release" / "icefold"

pytestmark = pytest.mark.skipif(
    not BINARY.is_file(),
    reason=f"{BINARY} is absent: run `cargo build --release` first",
)

RUNS = {
    "map": ["map", "--across", "orbit.obliquity=0:60:7", "--cells", "40"],
    "seasonal_map": [
        "map",
        str(ROOT / "scenarios" / "sea-ice.toml"),
        "--set",
        "grid.bands=16",
        "--set",
        "seasons.steps_per_year=24",
        "--across",
        "radiation.forcing=0:2:3",
        "--from",
        "1220",
        "--to",
        "1300",
        "--cells",
        "20",
    ],
    "periodic": [
        "periodic",
        "--set",
        "seasons.steps_per_year=24",
        "--set",
        "grid.bands=30",
    ],
}


@pytest.fixture(scope="module")
def outputs(tmp_path_factory):
    """Runs each command once into its own directory; returns the directories."""
    base = tmp_path_factory.mktemp("icefold")
    dirs = {}
    for name, args in RUNS.items():
        out = base / name
        done = subprocess.run(
            [str(BINARY), *args, "--quiet", "--out", str(out)],
            capture_output=True,
            text=True,
            timeout=300,
        )
        assert done.returncode == 0, f"icefold {name} failed:\n{done.stderr}"
        dirs[name] = out
    return dirs


def open_strict(path):
    """Opens and loads a dataset with every warning turned into an error."""
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        ds = xr.open_dataset(path, engine="scipy")
        ds.load()
    return ds


def test_every_netcdf_file_opens_without_warnings(outputs):
    files = sorted(p for d in outputs.values() for p in d.glob("*.nc"))
    assert {p.name for p in files} == {"map.nc", "seasonal_cycle.nc"}
    for path in files:
        with open_strict(path) as ds:
            assert ds.attrs["Conventions"] == "CF-1.8", path
            for name, var in ds.variables.items():
                assert var.attrs.get("long_name"), f"{path.name}: {name}"
                # decoded time keeps its units in the encoding
                units = var.attrs.get("units") or var.encoding.get("units")
                assert units, f"{path.name}: {name}"


def test_seasonal_cycle_time_latitude_temperature(outputs):
    with open_strict(outputs["periodic"] / "seasonal_cycle.nc") as ds:
        time = ds["time"]
        assert np.issubdtype(time.dtype, np.datetime64)
        assert time.encoding["calendar"] == "proleptic_gregorian"
        assert time.values[0] == np.datetime64("2000-03-20T00:00:00")
        assert time.attrs["axis"] == "T"
        assert "equinox" in time.attrs["comment"]
        assert ds.sizes["time"] == 24

        lat = ds["latitude"]
        assert lat.attrs["standard_name"] == "latitude"
        assert lat.attrs["units"] == "degrees_north"
        assert lat.attrs["axis"] == "Y"
        bounds = ds[lat.attrs["bounds"]]
        assert bounds.dims == ("latitude", "nv")
        assert bounds.attrs["units"] == "degrees_north"
        b = bounds.values
        assert ds.sizes["latitude"] == 30
        assert np.all((b[:, 0] < lat.values) & (lat.values < b[:, 1]))
        assert b[0, 0] == -90.0 and b[-1, 1] == 90.0
        np.testing.assert_array_equal(b[1:, 0], b[:-1, 1])

        weights = ds["band_area_fraction"]
        assert weights.dims == ("latitude",)
        np.testing.assert_allclose(float(weights.sum()), 1.0, rtol=1e-12)

        for name in ("temperature", "annual_mean_temperature", "global_mean_temperature"):
            assert ds[name].attrs["standard_name"] == "surface_temperature", name
            assert ds[name].attrs["units"] == "degC", name
        # the year-mean habitable fraction is the area-weighted sum of each
        # band's fraction of the year (area and time means commute; common
        # practice, no source; Spiegel, Menou & Scharf 2008 for the per-band
        # fraction), and each lies in [0, 1]
        daily = ds["habitable_fraction"]
        assert daily.dims == ("equilibrium", "time") and daily.attrs["units"] == "1"
        year = ds["habitable_year_fraction"]
        assert year.dims == ("equilibrium", "latitude")
        assert float(daily.min()) >= 0 and float(daily.max()) <= 1
        assert float(year.min()) >= 0 and float(year.max()) <= 1
        np.testing.assert_allclose(
            (year * weights).sum("latitude"), daily.mean("time"), atol=1e-12
        )
        # the seasonal range is the spread of each band's temperature
        spread = ds["temperature"].max("time") - ds["temperature"].min("time")
        np.testing.assert_allclose(ds["seasonal_temperature_range"], spread, atol=1e-12)
        assert ds["seasonal_temperature_range"].attrs["units"] == "K"

        # the global mean is the area-weighted mean of the bands
        np.testing.assert_allclose(
            ds["temperature"].weighted(weights).mean("latitude"),
            ds["global_mean_temperature"],
            atol=1e-9,
        )


def test_map_counts_match_the_per_climate_variables(outputs):
    with open_strict(outputs["map"] / "map.nc") as ds:
        count = ds["stable_climates"]
        assert count.dims == ("orbit_flux", "orbit_obliquity")
        assert ds.sizes["climate"] == int(count.max())
        assert ds["orbit_obliquity"].attrs["axis"] == "X"
        assert ds["orbit_flux"].attrs["axis"] == "Y"
        assert ds[ds["orbit_flux"].attrs["bounds"]].dims == ("orbit_flux", "nv")

        temperature = ds["global_mean_temperature"]
        assert temperature.attrs["standard_name"] == "surface_temperature"
        assert temperature.attrs["units"] == "degC"
        for name in (
            "global_mean_temperature",
            "ice_edge_north_deg",
            "ice_edge_south_deg",
            "state",
            "habitable_fraction",
        ):
            var = ds[name]
            assert var.dims == ("orbit_flux", "orbit_obliquity", "climate"), name
            present = var.notnull().sum("climate")
            assert (present == count).all(), name
        for name in ("ice_edge_north_deg", "ice_edge_south_deg"):
            assert ds[name].attrs["units"] == "degrees_north"
            edges = ds[name].values
            edges = edges[~np.isnan(edges)]
            assert edges.size and np.all((edges >= -90) & (edges <= 90)), name

        # an area fraction (common practice, no source)
        habitable = ds["habitable_fraction"]
        assert habitable.attrs["units"] == "1"
        h = habitable.values
        h = h[~np.isnan(h)]
        assert h.size and np.all((h >= 0) & (h <= 1))
        # snowballs have no habitable surface (T < 0 C everywhere); the
        # warmest climate of some cell has most of its surface habitable
        snow = ds["state"].values == 8
        assert np.all(habitable.values[snow] == 0)
        assert float(habitable.isel(climate=0).max()) > 0.5

        # each climate's state is one flag; together they make the regime mask
        state = ds["state"]
        flags = list(state.attrs["flag_values"])
        assert flags == [1, 2, 4, 8, 16]
        assert state.attrs["flag_meanings"].split()[1] == "polar_caps"
        values = state.values
        assert set(np.unique(values[~np.isnan(values)]).astype(int)) <= set(flags)
        mask = np.zeros(count.shape, dtype=int)
        for k in range(ds.sizes["climate"]):
            v = values[:, :, k]
            mask |= np.where(np.isnan(v), 0, v).astype(int)
        np.testing.assert_array_equal(mask, ds["regime"].values)

        # warmest first within a cell
        t = temperature.values
        diffs = np.diff(t, axis=2)
        assert np.all(np.isnan(diffs) | (diffs <= 0))


def test_map_files_name_the_model_that_made_them(outputs):
    """map.nc says which model made the map (a global attribute, as CF
    allows free-form ones; from memory); a seasonal map's residual is a
    temperature change in K, and its cells are finite where present."""
    with open_strict(outputs["map"] / "map.nc") as ds:
        assert ds.attrs["model"] == "annual-mean"
        assert "steps_per_year" not in ds.attrs
        assert ds["slice_max_residual"].attrs["units"] == "W m-2"
    with open_strict(outputs["seasonal_map"] / "map.nc") as ds:
        assert ds.attrs["model"] == "seasonal with sea ice"
        assert int(ds.attrs["steps_per_year"]) == 24
        assert "Floquet" in ds.attrs["stability"]
        assert ds["slice_max_residual"].attrs["units"] == "K"
        count = ds["stable_climates"]
        assert count.dims == ("orbit_flux", "radiation_forcing")
        t = ds["global_mean_temperature"]
        assert ((t.notnull().sum("climate")) == count).all()
        assert np.all(np.isfinite(t.values[t.notnull().values]))
