//! Shared test helpers: closed-form reference solutions and scenario builders.
#![allow(dead_code)]
pub mod reference;

use icefold::io::scenario::Scenario;
use icefold::model::Model;
use std::path::PathBuf;
use std::process::Command;

/// The classic present-day Legendre scenario with overrides.
pub fn classic(sets: &[&str]) -> Model {
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/scenarios/classic.toml"
    ))
    .unwrap();
    let sets: Vec<String> = sets.iter().map(|s| s.to_string()).collect();
    Scenario::parse(&text, "classic", &sets).unwrap().model()
}

/// Bisection for a root of f in [a, b] (f(a), f(b) of opposite signs).
pub fn bisect(f: impl Fn(f64) -> f64, mut a: f64, mut b: f64, tol: f64) -> f64 {
    let fa = f(a);
    assert!(fa * f(b) <= 0.0, "no sign change on [{a}, {b}]");
    for _ in 0..200 {
        let m = 0.5 * (a + b);
        if (b - a) < tol {
            return m;
        }
        if (f(m) > 0.0) == (fa > 0.0) {
            a = m;
        } else {
            b = m;
        }
    }
    0.5 * (a + b)
}

/// Runs the icefold binary; returns (exit code, stdout, stderr).
pub fn icefold(args: &[&str]) -> (i32, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_icefold"))
        .args(args)
        .output()
        .expect("run icefold");
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

/// A fresh (absent) directory under the system temp dir, unique per test
/// binary and name.
pub fn temp_dir(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("icefold-test-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    d
}
