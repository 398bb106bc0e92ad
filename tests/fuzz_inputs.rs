//! Property-based fuzzing of the input readers (stable Rust, in every test
//! run): random and mutated scenario texts, `--set` lines, map shards and
//! state files never panic, and a refusal is one line. The deeper
//! coverage-guided pass is `fuzz/` (cargo fuzz, nightly; DEVELOPERS.md).
//! The expectation (bad input is an error, never a crash) is the README's;
//! common practice, no source.
mod common;

use icefold::io::scenario::{DEFAULT_SCENARIO, Scenario};
use proptest::prelude::*;
use std::path::PathBuf;

/// `text` with `edits` (position fraction, byte) applied: overwrite,
/// insert or delete one byte each.
fn mutate(text: &[u8], edits: &[(f64, u8, u8)]) -> Vec<u8> {
    let mut v = text.to_vec();
    for &(at, op, b) in edits {
        let i = ((at * v.len() as f64) as usize).min(v.len());
        match op % 3 {
            0 if i < v.len() => v[i] = b,
            1 => v.insert(i, b),
            _ if i < v.len() => {
                v.remove(i);
            }
            _ => {}
        }
    }
    v
}

fn one_line(e: &str) {
    assert!(!e.trim().is_empty(), "empty error");
    assert!(!e.trim().contains('\n'), "a multi-line error: {e}");
}

fn scratch(name: &str) -> PathBuf {
    let d = common::temp_dir(name);
    std::fs::create_dir_all(&d).unwrap();
    d
}

/// A valid shard file's text (one small map shard), made once.
fn shard_text() -> &'static str {
    static T: std::sync::OnceLock<String> = std::sync::OnceLock::new();
    T.get_or_init(|| {
        let d = common::temp_dir("fuzz-shard-src");
        let (code, _, err) = common::icefold(&[
            "map",
            "--across",
            "orbit.obliquity=0:90:2",
            "--cells",
            "4",
            "--shard",
            "0/1",
            "--quiet",
            "--set",
            "grid.bands=12",
            "--out",
            d.to_str().unwrap(),
        ]);
        assert_eq!(code, 0, "{err}");
        let t = std::fs::read_to_string(d.join("shard-0-of-1.json")).unwrap();
        let _ = std::fs::remove_dir_all(&d);
        t
    })
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 256, rng_seed: proptest::test_runner::RngSeed::Fixed(20261203), ..ProptestConfig::default() })]

    #[test]
    fn mutated_scenarios_never_panic(edits in prop::collection::vec((0.0f64..1.0, any::<u8>(), any::<u8>()), 1..12)) {
        let bytes = mutate(DEFAULT_SCENARIO.as_bytes(), &edits);
        if let Ok(text) = std::str::from_utf8(&bytes) {
            match Scenario::parse(text, "fuzz", &[]) {
                Ok(sc) => { let _ = sc.model(); }
                Err(e) => one_line(&e.to_string()),
            }
        }
    }

    #[test]
    fn random_set_lines_never_panic(line in "[a-z_.=\"0-9eE+-]{0,40}") {
        if let Err(e) = Scenario::parse(DEFAULT_SCENARIO, "fuzz", &[line]) {
            one_line(&e.to_string());
        }
    }

    #[test]
    fn mutated_shards_never_panic(edits in prop::collection::vec((0.0f64..1.0, any::<u8>(), any::<u8>()), 1..8)) {
        let d = scratch("fuzz-shards");
        let f = d.join("shard-0-of-1.json");
        std::fs::write(&f, mutate(shard_text().as_bytes(), &edits)).unwrap();
        if let Err(e) = icefold::cli::shard::check_shard_file(&f) {
            one_line(&e.to_string());
        }
    }

    #[test]
    fn random_state_files_never_panic(rows in prop::collection::vec(("[-0-9.eE]{0,8}", "[-0-9.eE]{0,8}"), 0..14), header in prop::sample::select(vec!["latitude_deg,temperature_c", "temperature_c,latitude_deg", "x,y", ""])) {
        let sc = Scenario::parse(DEFAULT_SCENARIO, "fuzz", &["grid.bands=12".into()]).unwrap();
        let model = sc.model();
        let d = scratch("fuzz-state");
        let state = d.join("state.csv");
        let meta = serde_json::json!({"format": "icefold-state-1", "scenario": sc.name(), "bands": 12, "spacing": "sine", "symmetric": false, "steps_per_year": 360, "year_fraction": 0.0});
        std::fs::write(d.join("state.json"), meta.to_string()).unwrap();
        let mut text = format!("{header}\n");
        for (a, b) in &rows { text += &format!("{a},{b}\n"); }
        std::fs::write(&state, text).unwrap();
        if let Err(e) = icefold::cli::seasons::read_state(&state, &sc, &model, 360) {
            one_line(&e.to_string());
        }
    }
}
