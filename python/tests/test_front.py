"""The Python front (`import icefold`, built by `pip install .`) returns
what the commands write: every column of every table equal to the value
the command line writes, to the last bit (the CSV files hold shortest
round-trip decimals), bad input raises ValueError with the command line's
message, failed computations raise icefold.ComputationError, calls from
several Python threads give the sequential results, and Ctrl-C stops a
long map.

Needs the release binary (`cargo build --release`) and the module
(`pip install .`); tests/all.sh does both.
"""

import csv
import io
import json
import math
import os
import signal
import subprocess
import sys
import textwrap
import time
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

import icefold

ROOT = Path(__file__).resolve().parents[2]
BINARY = ROOT / "target" / "release" / "icefold"
KDWARF = ROOT / "scenarios" / "kdwarf-ocean.toml"


def cli(tmp_path, *args):
    """Runs the binary into a fresh --out; returns (stdout, {name: bytes})."""
    out = tmp_path / f"cli-{len(list(tmp_path.iterdir()))}"
    r = subprocess.run(
        [str(BINARY), *map(str, args), "--out", str(out), "--quiet"],
        capture_output=True,
        text=True,
        check=True,
    )
    return r.stdout, {p.name: p.read_bytes() for p in out.iterdir()}


def table(data):
    rows = list(csv.reader(io.StringIO(data.decode())))
    return rows[0], rows[1:]


def same_column(values, cells, what):
    """Every cell of the command's CSV column equals the Dataset's value
    (floats bit for bit: Python's float() of the shortest round-trip
    decimal is the double the command held)."""
    assert len(values) == len(cells), what
    for v, c in zip(values.tolist(), cells):
        if c in ("true", "false"):
            assert v == (c == "true"), what
        elif c == "":
            # empty: NaN in a numeric column, empty text in a text column
            assert v == "" or (isinstance(v, float) and math.isnan(v)), what
        else:
            try:
                x = float(c)
            except ValueError:
                assert v == c, what
                continue
            assert float(v) == x, f"{what}: {v!r} != {c}"


def assert_tables_equal(ds, files, name, dim, prefix=""):
    header, rows = table(files[name])
    assert ds.sizes[dim] == len(rows)
    for i, h in enumerate(header):
        var = prefix + h.replace(".", "_")
        same_column(ds[var].values, [r[i] for r in rows], f"{name}:{h}")


@pytest.mark.parametrize("scenario", [None, KDWARF])
def test_trace_equals_the_command(tmp_path, scenario):
    # common practice, no source: the front must return the command's numbers
    args = ["trace"] + ([scenario] if scenario else [])
    stdout, files = cli(tmp_path, *args)
    ds = icefold.trace(scenario)
    assert_tables_equal(ds, files, "branches.csv", "point")
    assert_tables_equal(ds, files, "folds.csv", "fold", "fold_")
    # the traced parameter is the coordinate, with its unit
    key = ds.attrs["vary"]
    assert key.replace(".", "_") in ds.coords
    # the same folds, bit for bit, in the summary too
    mine = json.loads(ds.attrs["summary"])["folds"]
    theirs = json.loads(files["summary.json"])["folds"]
    assert mine == theirs
    assert ds.attrs["report"].splitlines()[0] == stdout.splitlines()[0]


def test_solve_map_periodic_sun_equal_the_commands(tmp_path):
    _, files = cli(tmp_path, "solve")
    ds = icefold.solve()
    assert_tables_equal(ds, files, "profile.csv", "point")
    assert ds["latitude_deg"].attrs["units"] == "degrees_north"

    across = "orbit.obliquity=0:60:4"
    _, files = cli(tmp_path, "map", "--across", across, "--cells", "40")
    ds = icefold.map(across=across, cells=40)
    assert_tables_equal(ds, files, "map.csv", "point", "point_")
    assert_tables_equal(ds, files, "boundaries.csv", "boundary", "boundary_")

    # the map on its grid equals the command's map.nc as xarray reads it
    nc = tmp_path / "map.nc"
    nc.write_bytes(files["map.nc"])
    theirs = xr.open_dataset(nc, engine="scipy").load()
    assert set(theirs.data_vars) <= set(ds.data_vars)
    for v in theirs.variables:
        xr.testing.assert_identical(ds[v].drop_attrs(), theirs[v].drop_attrs())
        mine, their = ds[v].attrs, theirs[v].attrs
        assert sorted(mine) == sorted(their), v
        for k in their:
            assert np.array_equal(np.asarray(mine[k]), np.asarray(their[k])), (v, k)
    assert ds.attrs["file_Conventions"] == theirs.attrs["Conventions"]
    # not all cells alike: the mask varies over the grid
    mask = [v for v in theirs.data_vars if theirs[v].ndim == 2][0]
    assert np.unique(theirs[mask].values[np.isfinite(theirs[mask].values)]).size > 1

    sets = ["--set", "grid.bands=16", "--set", "seasons.steps_per_year=24"]
    _, files = cli(tmp_path, "periodic", *sets)
    ds = icefold.periodic(**{"grid.bands": 16, "seasons.steps_per_year": 24})
    assert_tables_equal(ds, files, "annual_mean.csv", "point", "point_")
    assert_tables_equal(ds, files, "seasonal_cycle.csv", "sample", "sample_")

    _, files = cli(tmp_path, "sun")
    ds = icefold.sun()
    assert_tables_equal(ds, files, "insolation.csv", "sample", "sample_")


def test_run_and_check_equal_the_commands(tmp_path):
    sets = {"grid.bands": 16, "seasons.steps_per_year": 24}
    flags = ["--set", "grid.bands=16", "--set", "seasons.steps_per_year=24"]
    _, files = cli(tmp_path, "run", "--years", "2", "--from", "cold", *flags)
    ds = icefold.run(years=2, start="cold", **sets)
    assert_tables_equal(ds, files, "timeseries.csv", "time", "time_")
    assert_tables_equal(ds, files, "state.csv", "band", "band_")
    # a run continued from the state it wrote, as `run --from FILE` does
    state = tmp_path / "state.csv"
    state.write_bytes(files["state.csv"])
    (tmp_path / "state.json").write_bytes(files["state.json"])  # read beside it
    _, again = cli(tmp_path, "run", "--years", "1", "--from", state, *flags)
    ds2 = icefold.run(years=1, start=state, **sets)
    assert_tables_equal(ds2, again, "state.csv", "band", "band_")
    # check: the scenario with its defaults, as the command prints it
    r = subprocess.run([str(BINARY), "check", *flags], capture_output=True, text=True, check=True)
    assert icefold.check(**sets) == r.stdout


@pytest.mark.parametrize("scenario", [None, KDWARF])
def test_solve_and_map_of_both_scenarios(tmp_path, scenario):
    extra = [scenario] if scenario else []
    _, files = cli(tmp_path, "solve", *extra)
    assert_tables_equal(icefold.solve(scenario), files, "profile.csv", "point")
    across = "orbit.obliquity=10:50:3"
    _, files = cli(tmp_path, "map", *extra, "--across", across, "--cells", "30")
    ds = icefold.map(scenario, across=across, cells=30)
    assert_tables_equal(ds, files, "map.csv", "point", "point_")


def test_map_over_two_keys_equals_the_command(tmp_path):
    # common practice, no source: a map over several --across keys returns
    # the command's rows and its map.nc with one dimension per key
    keys = ["orbit.obliquity=0:40:3", "radiation.co2_ppm=280:560:2"]
    args = [a for k in keys for a in ("--across", k)]
    _, files = cli(tmp_path, "map", *args, "--cells", "30", "--set", "grid.bands=36")
    ds = icefold.map(across=keys, cells=30, **{"grid.bands": 36})
    assert_tables_equal(ds, files, "map.csv", "point", "point_")
    assert_tables_equal(ds, files, "boundaries.csv", "boundary", "boundary_")
    nc = tmp_path / "map2.nc"
    nc.write_bytes(files["map.nc"])
    theirs = xr.open_dataset(nc, engine="scipy").load()
    assert {"orbit_obliquity", "radiation_co2_ppm"} <= set(theirs.dims)
    for v in theirs.data_vars:
        xr.testing.assert_identical(ds[v].drop_attrs(), theirs[v].drop_attrs())


def test_map_hierarchy_equals_the_command(tmp_path):
    # common practice, no source: map(hierarchy=True) returns the rows of
    # `map --hierarchy` with their model and its map.nc with the model
    # dimension
    scenario = ROOT / "scenarios" / "sea-ice.toml"
    across = "transport.diffusivity=0.5:0.7:2"
    small = {"grid.bands": 16, "seasons.steps_per_year": 24}
    sets = [a for k, v in small.items() for a in ("--set", f"{k}={v}")]
    _, files = cli(
        tmp_path, "map", scenario, "--hierarchy", "--across", across,
        "--vary", "orbit.flux", "--from", "1300", "--to", "1400", "--cells", "10", *sets,
    )
    ds = icefold.map(
        scenario, across=across, vary="orbit.flux", start=1300, stop=1400,
        cells=10, hierarchy=True, **small,
    )
    assert_tables_equal(ds, files, "map.csv", "point", "point_")
    assert_tables_equal(ds, files, "boundaries.csv", "boundary", "boundary_")
    assert set(ds["point_model"].values) == {"annual-mean", "seasonal", "seasonal-sea-ice"}
    nc = tmp_path / "maphier.nc"
    nc.write_bytes(files["map.nc"])
    theirs = xr.open_dataset(nc, engine="scipy").load()
    assert theirs.sizes["model"] == 3
    for v in theirs.data_vars:
        xr.testing.assert_identical(ds[v].drop_attrs(), theirs[v].drop_attrs())


def test_figures_by_format(tmp_path):
    # common practice, no source: figures="svg" draws the SVG only, the same
    # bytes as the command's; a bad choice names the allowed ones
    _, files = cli(tmp_path, "trace", "--figures", "svg")
    ds = icefold.trace(figures="svg")
    out = tmp_path / "svg-only"
    icefold.to_files(ds, out)
    names = {p.name for p in out.iterdir()}
    assert "hysteresis.svg" in names and "hysteresis.png" not in names
    assert (out / "hysteresis.svg").read_bytes() == files["hysteresis.svg"]
    with pytest.raises(ValueError, match="none, svg, png, all"):
        icefold.trace(figures="gif")


def test_thermostat_equals_the_command(tmp_path):
    scenario = ROOT / "scenarios" / "outer-edge.toml"
    _, files = cli(tmp_path, "thermostat", scenario, "--outgassing", "0.1:1:4")
    ds = icefold.thermostat(scenario, outgassing="0.1:1:4")
    assert_tables_equal(ds, files, "thermostat.csv", "run")
    assert_tables_equal(ds, files, "cycle.csv", "cycle", "cycle_")
    assert ds["period_yr"].attrs["units"] == "year"
    with pytest.raises(ValueError, match="outgassing"):
        icefold.thermostat(scenario, outgassing=-1)


def test_thermostat_map_equals_the_command(tmp_path):
    scenario = ROOT / "scenarios" / "outer-edge.toml"
    rates, across = "0.1:100:7:log", "orbit.flux=1050:1250:5"
    _, files = cli(
        tmp_path, "thermostat", scenario, "--outgassing", rates, "--across", across
    )
    ds = icefold.thermostat(scenario, outgassing=rates, across=across, threads=2)
    assert ds.sizes["cell"] == 35
    assert_tables_equal(ds, files, "thermostat_map.csv", "cell", "cell_")
    assert "cycles" in set(ds["cell_outcome"].values.tolist())


def test_to_files_writes_the_files_of_the_command(tmp_path):
    _, files = cli(tmp_path, "map", "--across", "orbit.obliquity=0:30:3", "--cells", "30")
    ds = icefold.map(across="orbit.obliquity=0:30:3", cells=30, figures=True)
    out = tmp_path / "front"
    icefold.to_files(ds, out)
    mine = {p.name: p.read_bytes() for p in out.iterdir()}
    assert sorted(mine) == sorted(files)
    for name in files:
        if name == "summary.json":
            # identical but for the command line it records
            a, b = json.loads(mine[name]), json.loads(files[name])
            a.pop("command"), b.pop("command")
            assert a == b
        else:
            assert mine[name] == files[name], name
    # map.nc opens as the command's map.nc
    nc = xr.open_dataset(out / "map.nc", engine="scipy")
    assert "stable_count" in nc or len(nc.data_vars) > 0
    # published as the command publishes: a second set replaces the first,
    # a directory holding anything else is refused and left alone
    icefold.to_files(icefold.map(across="orbit.obliquity=0:30:2", cells=30), out)
    assert not (out / "map.svg").exists()
    foreign = tmp_path / "foreign"
    foreign.mkdir()
    (foreign / "notes.txt").write_text("mine")
    with pytest.raises(ValueError, match="notes.txt|not an icefold"):
        icefold.to_files(ds, foreign)
    assert sorted(p.name for p in foreign.iterdir()) == ["notes.txt"]


def test_the_files_kept_for_to_files_go_with_their_dataset():
    # common practice, no source: a 1,000-call ensemble must not keep
    # every call's files alive
    import gc

    gc.collect()
    before = len(icefold._FILES)
    ds = icefold.solve()
    assert len(icefold._FILES) == before + 1
    del ds
    gc.collect()
    assert len(icefold._FILES) == before


def test_a_loaded_scenario_is_the_file_with_its_overrides(tmp_path):
    sc = icefold.load(KDWARF, {"orbit.obliquity": 35}, **{"grid.bands": 45})
    assert "obliquity = 35" in sc.toml and "bands = 45" in sc.toml
    _, files = cli(tmp_path, "trace", KDWARF, "--set", "orbit.obliquity=35", "--set", "grid.bands=45")
    assert_tables_equal(icefold.trace(sc), files, "folds.csv", "fold", "fold_")
    with pytest.raises(ValueError, match="grid.bands"):
        icefold.load(**{"grid.bands": 1})


def test_bad_input_raises_value_error_naming_the_field():
    with pytest.raises(ValueError, match=r"orbit\.flux.*-5.*allowed"):
        icefold.trace(**{"orbit.flux": -5})
    # the suggestion the command line gives
    with pytest.raises(ValueError, match=r"unknown key `orbit\.fluxx`, did you mean `orbit\.flux`"):
        icefold.solve(sets={"orbit.fluxx": 1300})
    with pytest.raises(ValueError, match="orbit.obliquity"):
        icefold.trace(vary="orbit.obliquity", start=-10, stop=20)


def test_a_failed_computation_raises_computation_error():
    # below absolute zero (Budyko 1969 law with A = 1000, B = 1): solve
    # refuses, as the command line does with exit 1
    with pytest.raises(icefold.ComputationError, match="below absolute zero"):
        icefold.solve(**{"radiation.a": 1000, "radiation.b": 1})
    assert not isinstance(icefold.ComputationError("x"), ValueError)


def test_threads_give_the_sequential_results():
    # common practice, no source: results must not depend on threads
    obliquities = [10.0, 23.44, 40.0, 60.0]
    seq = [icefold.trace(**{"orbit.obliquity": o}) for o in obliquities]
    with ThreadPoolExecutor(max_workers=4) as pool:
        par = list(pool.map(lambda o: icefold.trace(**{"orbit.obliquity": o}), obliquities))
    for a, b in zip(seq, par):
        xr.testing.assert_identical(a.drop_attrs(), b.drop_attrs())
        assert a.attrs["summary"] == b.attrs["summary"]
    # and the obliquities did differ
    assert not seq[0]["orbit_flux"].equals(seq[2]["orbit_flux"])


def test_ctrl_c_interrupts_a_long_map(tmp_path):
    code = textwrap.dedent(
        """
        import sys, icefold
        print("started", flush=True)
        try:
            icefold.map(across="orbit.obliquity=0:90:400", cells=50, threads=1)
        except KeyboardInterrupt:
            print("interrupted", flush=True)
            sys.exit(0)
        print("finished", flush=True)
        """
    )
    p = subprocess.Popen(
        [sys.executable, "-c", code],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        cwd=tmp_path,
    )
    assert p.stdout.readline().strip() == "started"
    time.sleep(1.0)
    sent = time.monotonic()
    p.send_signal(signal.SIGINT)
    out, err = p.communicate(timeout=60)
    assert p.returncode == 0, err
    assert out.strip() == "interrupted", out + err
    # stopped at the next slice, not after the whole map
    assert time.monotonic() - sent < 10
    # nothing written anywhere
    assert list(tmp_path.iterdir()) == []


def test_the_wheel_alone_works_in_a_fresh_virtual_environment(tmp_path):
    # common practice, no source: the abi3 wheel is all a user installs
    # (pip brings numpy and xarray, its only dependencies)
    # the wheel tests/all.sh built (and installed here); else built now
    wheels = ROOT / "target" / "wheels"
    if not list(wheels.glob("icefold-*.whl")):
        wheels = tmp_path / "wheels"
        subprocess.run(
            [sys.executable, "-m", "maturin", "build", "--release", "--quiet", "-o", str(wheels)],
            cwd=ROOT,
            check=True,
            capture_output=True,
        )
    (wheel,) = wheels.glob("icefold-*.whl")
    assert "-abi3-" in wheel.name, wheel.name
    venv = tmp_path / "venv"
    subprocess.run([sys.executable, "-m", "venv", str(venv)], check=True)
    py = venv / "bin" / "python"
    subprocess.run(
        [str(py), "-m", "pip", "install", "--quiet", "--disable-pip-version-check", str(wheel)],
        check=True,
        capture_output=True,
    )
    # outside the source tree, so only the installed package can be found
    probe = 'import icefold; ds = icefold.trace(); print(ds.sizes["fold"], ds.attrs["vary"])'
    r = subprocess.run([str(py), "-c", probe], cwd=tmp_path, capture_output=True, text=True)
    assert r.returncode == 0, r.stderr
    folds, key = r.stdout.split()
    assert key == "orbit.flux" and int(folds) >= 2
