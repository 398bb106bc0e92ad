//! Shared by the bench binaries: after criterion's groups have run, read
//! back the estimates criterion wrote in this same run and print the
//! comparisons as ratios, beside the figures the benches observed
//! (iteration counts, fold locations).
use std::cell::RefCell;
use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::SystemTime;

/// The lines printed after criterion's groups, in the order they were added.
pub struct Summary {
    title: &'static str,
    started: SystemTime,
    dir: PathBuf,
    lines: RefCell<Vec<String>>,
}

impl Summary {
    /// Call at the start of `main`: estimates older than this are not used.
    pub fn new(title: &'static str) -> Summary {
        Summary {
            title,
            started: SystemTime::now(),
            dir: criterion_dir(),
            lines: RefCell::new(Vec::new()),
        }
    }

    /// Criterion's typical time per iteration in seconds (the slope of its
    /// linear sampling, else the mean), for the bench whose id has these
    /// components (group, then function and/or value), if it was measured
    /// in this run (not filtered out, not `--test` or `--list`).
    pub fn time(&self, id: &[&str]) -> Option<f64> {
        let mut path = self.dir.clone();
        // each component is one directory, with criterion's replacements
        path.extend(id.iter().map(|c| c.replace(UNSAFE, "_")));
        path.push("new");
        path.push("estimates.json");
        let modified = std::fs::metadata(&path).ok()?.modified().ok()?;
        if modified < self.started {
            return None;
        }
        let v: serde_json::Value = serde_json::from_slice(&std::fs::read(&path).ok()?).ok()?;
        let est = if v["slope"].is_object() {
            &v["slope"]
        } else {
            &v["mean"]
        };
        Some(est["point_estimate"].as_f64()? * 1e-9)
    }

    /// A figure observed in this run (no timing involved).
    pub fn note(&self, line: impl Into<String>) {
        self.lines.borrow_mut().push(line.into());
    }

    /// `label: Nx faster (fast against slow)` from the two times measured in
    /// this run, or a note that one of them was not measured.
    pub fn ratio(&self, label: &str, fast: &[&str], slow: &[&str]) {
        let line = match (self.time(fast), self.time(slow)) {
            (Some(f), Some(s)) => format!(
                "{label}: {} ({} against {})",
                if s >= f {
                    format!("{} faster", times(s / f))
                } else {
                    format!("{} slower", times(f / s))
                },
                secs(f),
                secs(s)
            ),
            _ => format!("{label}: not both measured in this run"),
        };
        self.note(line);
    }

    /// `label: time (Nx the base time)`, for scaling with bands.
    #[allow(dead_code)] // not every bench binary scales
    pub fn scaling(&self, label: &str, id: &[&str], base: &[&str]) {
        let line = match (self.time(id), self.time(base)) {
            (Some(t), _) if id == base => format!("{label}: {}", secs(t)),
            (Some(t), Some(b)) => format!(
                "{label}: {} ({}x the {} time)",
                secs(t),
                sig(t / b),
                base.join("/")
            ),
            _ => format!("{label}: not both measured in this run"),
        };
        self.note(line);
    }

    /// Prints everything added, after criterion's own report.
    pub fn print(&self) {
        println!(
            "\n== {} summary (ratios of times measured in this run)",
            self.title
        );
        for l in self.lines.borrow().iter() {
            println!("{l}");
        }
    }
}

/// Characters criterion replaces by `_` in directory names.
const UNSAFE: [char; 10] = ['?', '"', '/', '\\', '*', '<', '>', ':', '|', '^'];

/// Where criterion writes, looked up in its own order: `CRITERION_HOME`,
/// `CARGO_TARGET_DIR/criterion`, cargo's target directory, `target/criterion`.
fn criterion_dir() -> PathBuf {
    if let Some(d) = std::env::var_os("CRITERION_HOME") {
        return PathBuf::from(d);
    }
    if let Some(d) = std::env::var_os("CARGO_TARGET_DIR") {
        return Path::new(&d).join("criterion");
    }
    let from_metadata = std::env::var_os("CARGO").and_then(|cargo| {
        let out = Command::new(cargo)
            .args(["metadata", "--format-version", "1", "--no-deps"])
            .output()
            .ok()?;
        let v: serde_json::Value = serde_json::from_slice(&out.stdout).ok()?;
        Some(PathBuf::from(v["target_directory"].as_str()?).join("criterion"))
    });
    from_metadata.unwrap_or_else(|| PathBuf::from("target/criterion"))
}

/// Seconds in a readable unit.
pub fn secs(s: f64) -> String {
    if s < 1e-3 {
        format!("{:.1} µs", s * 1e6)
    } else if s < 1.0 {
        format!("{} ms", sig(s * 1e3))
    } else {
        format!("{} s", sig(s))
    }
}

/// A ratio such as `120x` or `1.97x`.
fn times(r: f64) -> String {
    format!("{}x", sig(r))
}

/// Two or three significant figures.
fn sig(x: f64) -> String {
    if x >= 100.0 {
        format!("{x:.0}")
    } else if x >= 10.0 {
        format!("{x:.1}")
    } else {
        format!("{x:.2}")
    }
}

/// The default map of `icefold map`: 91 obliquity slices over 0 to 90 deg,
/// 200 cells over 0.8 to 1.15 times the scenario's flux.
#[allow(dead_code)] // not every bench binary maps
pub fn default_map_spec(model: &icefold::model::Model) -> icefold::analysis::sweep::MapSpec {
    let flux = model.param(icefold::model::Param::Flux);
    icefold::analysis::sweep::MapSpec {
        across: "orbit.obliquity".into(),
        across_from: 0.0,
        across_to: 90.0,
        count: 91,
        vary: "orbit.flux".into(),
        vary_from: 0.8 * flux,
        vary_to: 1.15 * flux,
        cells: 200,
        fold_curves: false,
        more: Vec::new(),
    }
}

/// Slice `j` of an obliquity-by-flux map as `icefold map` computes it
/// (warm and cold starts 30 and -60 C, tolerance 1e-10).
#[allow(dead_code)] // not every bench binary maps
pub fn map_slice(
    model: &icefold::model::Model,
    spec: &icefold::analysis::sweep::MapSpec,
    j: usize,
) -> icefold::analysis::sweep::Slice {
    use icefold::model::Param;
    icefold::analysis::sweep::compute_slice(
        model,
        spec,
        Param::Obliquity,
        Param::Flux,
        j,
        30.0,
        -60.0,
        1e-10,
    )
}

/// The slices of an obliquity-by-flux map as `icefold map` computes them
/// (in parallel on the current rayon pool).
#[allow(dead_code)] // not every bench binary maps
pub fn map_slices(
    model: &icefold::model::Model,
    spec: &icefold::analysis::sweep::MapSpec,
) -> Vec<icefold::analysis::sweep::Slice> {
    use rayon::prelude::*;
    (0..spec.count)
        .into_par_iter()
        .map(|j| map_slice(model, spec, j))
        .collect()
}
