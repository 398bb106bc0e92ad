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

/// The ranges `--vary` and `--across` accept are the key table's ranges
/// (README, documented ranges): for every continuation parameter, the
/// schema bounds equal `Param::range` (common practice, no source).
#[test]
fn continuation_ranges_match_the_key_table() {
    use icefold::io::schema::Kind;
    use icefold::model::Param;
    for p in Param::ALL {
        let spec = icefold::io::scenario::SCHEMA
            .iter()
            .find(|s| s.key == p.key())
            .unwrap_or_else(|| panic!("{} is not a scenario key", p.key()));
        let Kind::Num { lo, hi, open_lo } = spec.kind else {
            panic!("{} is not a number key", p.key());
        };
        let (plo, phi) = p.range();
        assert_eq!(phi, hi, "{}: upper bound", p.key());
        if open_lo {
            assert!(
                plo > lo && plo <= 1e-6 * hi.max(1.0),
                "{}: lower {plo} vs > {lo}",
                p.key()
            );
        } else {
            assert_eq!(plo, lo, "{}: lower bound", p.key());
        }
    }
}
