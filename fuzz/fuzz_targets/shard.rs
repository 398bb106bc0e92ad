//! Map shard files as `merge` reads them: an error or a valid shard,
//! never a panic.
#![no_main]
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let dir = std::env::temp_dir().join(format!("icefold-fuzz-shard-{}", std::process::id()));
    let _ = std::fs::create_dir_all(&dir);
    let f = dir.join("shard-0-of-1.json");
    if std::fs::write(&f, data).is_ok() {
        let _ = icefold::cli::shard::check_shard_file(&f);
    }
});
