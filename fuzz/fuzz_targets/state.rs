//! State tables as `run --from` reads them (with a matching side file): an
//! error or a start, never a panic.
#![no_main]
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let sc = icefold::Scenario::parse(
        icefold::io::scenario::DEFAULT_SCENARIO,
        "fuzz",
        &["grid.bands=12".into()],
    )
    .expect("the default scenario");
    let model = sc.model();
    let dir = std::env::temp_dir().join(format!("icefold-fuzz-state-{}", std::process::id()));
    let _ = std::fs::create_dir_all(&dir);
    let meta = format!(
        "{{\"format\":\"icefold-state-1\",\"scenario\":{:?},\"bands\":12,\"spacing\":\"sine\",\"symmetric\":false,\"steps_per_year\":360,\"year_fraction\":0.0}}",
        sc.name()
    );
    let state = dir.join("state.csv");
    if std::fs::write(dir.join("state.json"), meta).is_ok() && std::fs::write(&state, data).is_ok()
    {
        let _ = icefold::cli::seasons::read_state(&state, &sc, &model, 360);
    }
});
