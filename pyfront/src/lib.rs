//! The native half of icefold's Python front: one call runs a command of
//! the library exactly as the command line does (same scenario loading,
//! validation, computation and tables), with its outputs kept in memory
//! instead of published into `--out`, and the figures skipped unless asked
//! for. The Python package (`pyfront/icefold/`) turns the tables into
//! xarray Datasets. The computation runs without the GIL, on a thread of
//! its own, while the calling thread watches for Ctrl-C: an interrupt
//! sets the run's cancel flag (`Args::cancel`), which the command checks
//! between units of work (a map between slices), waits for it to stop and
//! raises `KeyboardInterrupt`; nothing is kept.

use icefold::cli::{Args, CliError};
use pyo3::create_exception;
use pyo3::exceptions::{PyException, PyOSError, PyValueError};
use pyo3::prelude::*;
use pyo3::types::PyBytes;
use std::path::PathBuf;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::{Arc, Mutex};
use std::time::Duration;

create_exception!(
    _native,
    ComputationError,
    PyException,
    "A computation that failed (the command line's exit 1): the message names the parameter and the residual reached."
);

/// Where a captured run's files would have gone (only their names inside
/// it are kept).
const OUT: &str = "icefold-output";

/// The options a command takes, as (name, text) pairs in the command
/// line's spelling without dashes (`vary`, `from`, `to`, `across`,
/// `cells`, `threads`, `shard`, `years`, `start`, `outgassing`, `co2`,
/// `cycle-at`, `figures` (`none`, `svg`, `png`, `all`); flags `fold-curves`,
/// `no-fold-curves`, `hierarchy` with the text "true"); `across` may come
/// more than once (one `--across` each, in order).
fn apply(args: &mut Args, options: Vec<(String, String)>) -> PyResult<()> {
    for (k, v) in options {
        match k.as_str() {
            "vary" => args.vary = Some(v),
            "from" => args.from = Some(v),
            "to" => args.to = Some(v),
            "across" => args.across.push(v),
            "cells" => args.cells = Some(v),
            "threads" => args.threads = Some(v),
            "shard" => args.shard = Some(v),
            "years" => args.years = Some(v),
            "start" => args.start = Some(PathBuf::from(v)),
            "fold-curves" => args.fold_curves = v == "true",
            "no-fold-curves" => args.no_fold_curves = v == "true",
            "hierarchy" => args.hierarchy = v == "true",
            "outgassing" => args.outgassing = Some(v),
            "co2" => args.co2 = Some(v),
            "cycle-at" => args.cycle_at = Some(v),
            "figures" => {
                args.figures = icefold::io::plot::Formats::from_name(&v).ok_or_else(|| {
                    PyValueError::new_err(format!(
                        "figures = `{v}` is not a figure choice (allowed: True, False, {})",
                        icefold::io::plot::Formats::NAMES.join(", ")
                    ))
                })?
            }
            other => {
                return Err(PyValueError::new_err(format!(
                    "unknown option `{other}` (allowed: vary, from, to, across, cells, threads, shard, years, start, fold-curves, no-fold-curves, hierarchy, outgassing, co2, cycle-at, figures)"
                )));
            }
        }
    }
    Ok(())
}

/// The command's `Args` as the command line would build them, with the
/// outputs named under a directory that is never written.
fn command_args(
    command: String,
    scenario: Option<PathBuf>,
    sets: Vec<String>,
    options: Vec<(String, String)>,
) -> PyResult<Args> {
    let mut args = Args {
        line: format!("icefold {command} (Python)"),
        command,
        scenario,
        sets,
        out: Some(PathBuf::from(OUT)),
        ..Args::default()
    };
    apply(&mut args, options)?;
    Ok(args)
}

fn to_py_err(e: CliError) -> PyErr {
    let text = e.to_string();
    match e.exit_code() {
        2 => PyValueError::new_err(text),
        _ if matches!(e, CliError::Export(_)) => PyOSError::new_err(text),
        _ => ComputationError::new_err(text),
    }
}

/// Runs `command` (solve, trace, map, periodic, run, sun, thermostat,
/// check) on the
/// scenario at `scenario` (None: the built-in default) with `sets`
/// (`section.key=value`, as `--set`) and `options`; returns (the text the
/// command prints, [(file name, bytes)] of the files it would write).
/// Raises ValueError for bad input, ComputationError for a failed
/// computation, KeyboardInterrupt on Ctrl-C.
#[pyfunction]
#[pyo3(signature = (command, scenario=None, sets=Vec::new(), options=Vec::new(), figures=false, quiet=true))]
#[allow(clippy::type_complexity)]
fn run(
    py: Python<'_>,
    command: String,
    scenario: Option<PathBuf>,
    sets: Vec<String>,
    options: Vec<(String, String)>,
    figures: bool,
    quiet: bool,
) -> PyResult<(String, Vec<(String, Py<PyBytes>)>)> {
    let capture = Arc::new(Mutex::new(Vec::new()));
    let cancel = Arc::new(AtomicBool::new(false));
    let base = command_args(command, scenario, sets, options)?;
    let args = Args {
        quiet,
        // all figures, or those of a `figures` option; none unless asked
        figures: if figures {
            base.figures
        } else {
            icefold::io::plot::Formats::None
        },
        capture: Some(capture.clone()),
        cancel: Some(cancel.clone()),
        ..base
    };
    // the worker hands its result over a channel, so the call returns the
    // moment it is done; between waits the caller looks for Ctrl-C
    let outcome = py.allow_threads(|| {
        std::thread::scope(|s| {
            let (done, result) = std::sync::mpsc::channel();
            let args = &args;
            let worker = s.spawn(move || {
                let _ = done.send(icefold::cli::run(args));
            });
            loop {
                match result.recv_timeout(Duration::from_millis(50)) {
                    Ok(r) => return Ok(Ok(r)),
                    Err(std::sync::mpsc::RecvTimeoutError::Disconnected) => {
                        // the worker ended without a result: it panicked
                        return Ok(worker.join().map(|()| Err(CliError::Failed(String::new()))));
                    }
                    Err(std::sync::mpsc::RecvTimeoutError::Timeout) => {}
                }
                if let Err(e) = Python::with_gil(|py| py.check_signals()) {
                    cancel.store(true, Ordering::Relaxed);
                    let _ = worker.join();
                    return Err(e);
                }
            }
        })
    })?;
    let text = match outcome {
        Ok(r) => r.map_err(to_py_err)?,
        Err(_) => return Err(ComputationError::new_err("the computation panicked")),
    };
    let files = std::mem::take(
        &mut *capture
            .lock()
            .map_err(|_| ComputationError::new_err("the output capture was poisoned"))?,
    );
    let files = files
        .into_iter()
        .map(|(name, bytes)| (name, PyBytes::new(py, &bytes).unbind()))
        .collect();
    Ok((text, files))
}

/// Publishes `files` ((name, bytes), as `run` returned them) as the whole
/// content of the directory `out`, exactly as a command publishes its
/// outputs into `--out` (all together or not at all, with the same
/// manifest; a directory holding files of anything else is refused with
/// ValueError). Returns the paths written.
#[pyfunction]
fn publish(py: Python<'_>, out: PathBuf, files: Vec<(String, Vec<u8>)>) -> PyResult<Vec<String>> {
    let mut set = icefold::io::export::OutputSet::new();
    for (name, bytes) in files {
        set.add(out.join(name), bytes);
    }
    let written = py
        .allow_threads(|| set.publish(&out))
        .map_err(|e| to_py_err(CliError::from(e)))?;
    Ok(written
        .iter()
        .map(|p| p.to_string_lossy().into_owned())
        .collect())
}

/// A list of numbers as a Python list.
fn numbers<T: Copy + for<'py> IntoPyObject<'py>>(py: Python<'_>, v: &[T]) -> PyResult<PyObject> {
    Ok(v.to_vec().into_pyobject(py)?.into_any().unbind())
}

/// An attribute value: text, or numbers.
fn attr_value(py: Python<'_>, a: &netcdf3::Attribute) -> PyResult<PyObject> {
    use netcdf3::DataType;
    match a.data_type() {
        DataType::U8 => Ok(a
            .get_as_string()
            .unwrap_or_default()
            .into_pyobject(py)?
            .into_any()
            .unbind()),
        DataType::I8 => numbers(py, a.get_i8().unwrap_or_default()),
        DataType::I16 => numbers(py, a.get_i16().unwrap_or_default()),
        DataType::I32 => numbers(py, a.get_i32().unwrap_or_default()),
        DataType::F32 => numbers(py, a.get_f32().unwrap_or_default()),
        DataType::F64 => numbers(py, a.get_f64().unwrap_or_default()),
    }
}

/// A variable of the file: (name, dimension names, type code, values,
/// attributes).
type NcVariable = (
    String,
    Vec<String>,
    &'static str,
    PyObject,
    Vec<(String, PyObject)>,
);

/// The content of a NetCDF-3 file held in memory (as a command writes it),
/// read by the netcdf3 crate: (dimensions [(name, length)], variables
/// [(name, dimension names, type code "i1"/"u1"/"i2"/"i4"/"f4"/"f8",
/// values flattened in C order, attributes {name: value})], global
/// attributes {name: value}). The Python package decodes it with
/// `xarray.decode_cf`, as `xarray.open_dataset` would.
#[pyfunction]
#[allow(clippy::type_complexity)]
fn read_netcdf(
    py: Python<'_>,
    data: Vec<u8>,
) -> PyResult<(
    Vec<(String, usize)>,
    Vec<NcVariable>,
    Vec<(String, PyObject)>,
)> {
    use netcdf3::DataVector;
    let bad = |e: netcdf3::error::ReadError| PyValueError::new_err(format!("NetCDF file: {e:?}"));
    let mut r =
        netcdf3::FileReader::open_seek_read("memory.nc", Box::new(std::io::Cursor::new(data)))
            .map_err(bad)?;
    let values = r.read_all_vars().map_err(bad)?;
    let ds = r.data_set();
    let dims = ds.get_dims().iter().map(|d| (d.name(), d.size())).collect();
    let mut vars = Vec::new();
    for v in ds.get_vars() {
        let attrs = v
            .get_attrs()
            .iter()
            .map(|a| Ok((a.name().to_string(), attr_value(py, a)?)))
            .collect::<PyResult<Vec<_>>>()?;
        let (code, obj) = match values.get(v.name()) {
            Some(DataVector::I8(x)) => ("i1", numbers(py, x)?),
            Some(DataVector::U8(x)) => ("u1", numbers(py, x)?),
            Some(DataVector::I16(x)) => ("i2", numbers(py, x)?),
            Some(DataVector::I32(x)) => ("i4", numbers(py, x)?),
            Some(DataVector::F32(x)) => ("f4", numbers(py, x)?),
            Some(DataVector::F64(x)) => ("f8", numbers(py, x)?),
            None => continue,
        };
        vars.push((v.name().to_string(), v.dim_names(), code, obj, attrs));
    }
    let globals = ds
        .get_global_attrs()
        .iter()
        .map(|a| Ok((a.name().to_string(), attr_value(py, a)?)))
        .collect::<PyResult<Vec<_>>>()?;
    Ok((dims, vars, globals))
}

/// Seconds per call of the library alone: `command` run `repeats` times
/// in Rust exactly as [`run`] runs it (captured, figures off), without
/// the GIL and without any conversion to Python objects. For the
/// benchmark of the front's overhead (`benches/python_front.py`).
#[pyfunction]
#[pyo3(signature = (command, scenario=None, sets=Vec::new(), options=Vec::new(), repeats=10))]
fn library_seconds(
    py: Python<'_>,
    command: String,
    scenario: Option<PathBuf>,
    sets: Vec<String>,
    options: Vec<(String, String)>,
    repeats: usize,
) -> PyResult<f64> {
    let args = Args {
        quiet: true,
        figures: icefold::io::plot::Formats::None,
        ..command_args(command, scenario, sets, options)?
    };
    let repeats = repeats.max(1);
    py.allow_threads(|| {
        let t = std::time::Instant::now();
        for _ in 0..repeats {
            let run = Args {
                capture: Some(Arc::new(Mutex::new(Vec::new()))),
                ..args.clone()
            };
            icefold::cli::run(&run).map_err(to_py_err)?;
        }
        Ok(t.elapsed().as_secs_f64() / repeats as f64)
    })
}

/// The library's version.
#[pyfunction]
fn version() -> &'static str {
    icefold::cli::VERSION
}

#[pymodule]
fn _native(m: &Bound<'_, PyModule>) -> PyResult<()> {
    m.add_function(wrap_pyfunction!(run, m)?)?;
    m.add_function(wrap_pyfunction!(version, m)?)?;
    m.add_function(wrap_pyfunction!(publish, m)?)?;
    m.add_function(wrap_pyfunction!(library_seconds, m)?)?;
    m.add_function(wrap_pyfunction!(read_netcdf, m)?)?;
    m.add("ComputationError", m.py().get_type::<ComputationError>())?;
    Ok(())
}
