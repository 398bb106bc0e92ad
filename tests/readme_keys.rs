//! The README's key table is generated from the schema; keep them in step.
#[test]
fn readme_lists_every_scenario_key() {
    let readme =
        std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/README.md")).unwrap();
    for spec in icefold::io::scenario::SCHEMA {
        assert!(
            readme.contains(&format!("`{}`", spec.key)),
            "README lacks `{}`",
            spec.key
        );
    }
}
