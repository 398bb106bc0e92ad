//! Map shards: the shard file `map --shard` writes, its reading and the
//! check of every field, and `icefold merge`, which joins shards into
//! exactly the files of a single run.
use super::context::{Args, CliError, written_list};
use super::map::{map_model, map_report, parse_acrosses, seasonal_key_error, usage};
use super::mapout::{MapWriter, scenario_num};
use crate::analysis::sweep::{MapModel, MapSpec, Slice};
use crate::io::export::OutputSet;
use crate::model::Param;
use serde::{Deserialize, Serialize};
use std::path::{Path, PathBuf};

/// Format tag of shard files (4: with the model that made the map).
pub(super) const SHARD_FORMAT: &str = "icefold-map-shard-4";

/// A shard file: everything a merge needs to render the map.
#[derive(Serialize, Deserialize)]
pub(super) struct ShardFile {
    pub(super) format: String,
    pub(super) tool: String,
    /// The model that computed the slices ([`MapModel::name`]).
    pub(super) model: String,
    pub(super) spec: MapSpec,
    pub(super) scenario: serde_json::Value,
    pub(super) scenario_toml: String,
    pub(super) shard: (usize, usize),
    pub(super) slices: Vec<Slice>,
}

/// Reads, parses and checks the shard file `f` ([`validate_shard`]).
fn read_shard(f: &Path) -> Result<ShardFile, CliError> {
    let text = crate::io::input::read_text(f, crate::io::input::SHARD_MAX_BYTES)
        .map_err(|e| usage(format!("cannot read {}: {e}", f.display())))?;
    let shard: ShardFile = serde_json::from_str(&text)
        .map_err(|e| usage(format!("{}: not a map shard ({e})", f.display())))?;
    if shard.format != SHARD_FORMAT {
        return Err(usage(format!(
            "{}: unknown shard format `{}`",
            f.display(),
            shard.format
        )));
    }
    validate_shard(f, &shard)?;
    Ok(shard)
}

/// Whether `f` is a shard `merge` accepts: the error `merge` would give
/// otherwise (for the fuzzing targets and tests).
pub fn check_shard_file(f: &Path) -> Result<(), CliError> {
    read_shard(f).map(|_| ())
}

/// Checks every field of a shard read from `f` against what `map` could
/// have written: the scenario text equals the scenario it claims, the
/// model is the one that scenario makes, the map
/// command passes the same checks as `map`'s options, the shard number
/// fits, and every slice lies on the declared grid with known states,
/// finite values in their ranges and regime masks that agree with the
/// climates. A hand-edited shard fails with the field named (exit 2).
fn validate_shard(f: &Path, shard: &ShardFile) -> Result<MapModel, CliError> {
    use crate::analysis::sweep::{STATES, state_bit};
    let bad = |field: String, why: String| usage(format!("{}: field `{field}` {why}", f.display()));
    let sc =
        crate::io::scenario::Scenario::parse(&shard.scenario_toml, "shard", &[]).map_err(|e| {
            bad(
                "scenario_toml".into(),
                format!("is not a valid scenario ({e})"),
            )
        })?;
    if sc.to_json() != shard.scenario {
        return Err(bad(
            "scenario".into(),
            "does not match the scenario text of the shard (scenario_toml)".into(),
        ));
    }
    let mm = map_model(&sc)
        .map_err(|e| bad("scenario_toml".into(), format!("cannot be mapped ({e})")))?;
    if shard.model != mm.name() {
        return Err(bad(
            "model".into(),
            format!(
                "= `{}` is not the model of the shard's scenario (`{}`)",
                shard.model,
                mm.name()
            ),
        ));
    }
    let model = mm.annual();
    let sp = &shard.spec;
    let vp = Param::from_key(&sp.vary).ok_or_else(|| {
        bad(
            "spec.vary".into(),
            format!("= `{}` is not a key --vary takes", sp.vary),
        )
    })?;
    if !model.has_param(vp) {
        return Err(bad(
            "spec.vary".into(),
            format!("= `{}` does not apply to the scenario", sp.vary),
        ));
    }
    let mut across_texts = vec![format!(
        "{}={}:{}:{}",
        sp.across, sp.across_from, sp.across_to, sp.count
    )];
    across_texts.extend(
        sp.more
            .iter()
            .map(|a| format!("{}={}:{}:{}", a.key, a.from, a.to, a.count)),
    );
    let super::map::Acrosses {
        params,
        first,
        more,
    } = parse_acrosses(&across_texts, &model, vp).map_err(|e| {
        bad(
            "spec.across".into(),
            format!("is not a valid set of --across ({e})"),
        )
    })?;
    if first != (sp.across_from, sp.across_to, sp.count) || more != sp.more {
        return Err(bad(
            "spec.across".into(),
            format!("= `{}` does not read back", across_texts.join(" ")),
        ));
    }
    for (field, flag, p) in params
        .iter()
        .map(|p| ("spec.across", "--across", *p))
        .chain([("spec.vary", "--vary", vp)])
    {
        if let Some(e) = seasonal_key_error(&mm, flag, p) {
            return Err(bad(field.into(), format!("is refused: {e}")));
        }
    }
    if sp.fold_curves && matches!(mm, MapModel::Seasonal(_)) {
        return Err(bad(
            "spec.fold_curves".into(),
            format!(
                "= true, but fold curves need the annual-mean model, not {}",
                mm.name()
            ),
        ));
    }
    let (lo, hi) = vp.range();
    if !(sp.vary_from.is_finite()
        && sp.vary_to.is_finite()
        && sp.vary_from < sp.vary_to
        && sp.vary_from >= lo
        && sp.vary_to <= hi)
    {
        return Err(bad(
            "spec.vary_from/vary_to".into(),
            format!(
                "= {}..{} is not an increasing range within {lo}..{hi}",
                sp.vary_from, sp.vary_to
            ),
        ));
    }
    if !(2..=100_000).contains(&sp.cells) {
        return Err(bad(
            "spec.cells".into(),
            format!("= {} is out of range: allowed 2 to 100000", sp.cells),
        ));
    }
    let (k, n) = shard.shard;
    if n == 0 || k >= n {
        return Err(bad(
            "shard".into(),
            format!("= {k}/{n}: expected K/N with 0 <= K < N"),
        ));
    }
    let all_bits: u32 = STATES.iter().map(|s| state_bit(*s)).fold(0, |a, b| a | b);
    let known = |label: &str| STATES.iter().any(|s| s.label() == label);
    let slack = 1e-9 * (sp.vary_to - sp.vary_from);
    let in_range = |v: f64| v.is_finite() && v >= sp.vary_from - slack && v <= sp.vary_to + slack;
    for (si, s) in shard.slices.iter().enumerate() {
        let at = |field: &str| format!("slices[{si}].{field}");
        if s.index >= sp.slices() || s.index % n != k {
            return Err(bad(
                at("index"),
                format!(
                    "= {} is not a slice of shard {k}/{n} of {} slices",
                    s.index,
                    sp.slices()
                ),
            ));
        }
        let want = sp.more_values(s.index);
        if s.more.len() != want.len()
            || s.more
                .iter()
                .zip(&want)
                .any(|(a, b)| a.to_bits() != b.to_bits())
        {
            return Err(bad(
                at("more"),
                format!(
                    "= {:?} are not the grid values {want:?} of the further across keys at slice {}",
                    s.more, s.index
                ),
            ));
        }
        if s.across.to_bits() != sp.across_value(s.index).to_bits() {
            return Err(bad(
                at("across"),
                format!(
                    "= {} is not the grid value {} of slice {}",
                    s.across,
                    sp.across_value(s.index),
                    s.index
                ),
            ));
        }
        if s.regime.len() != sp.cells
            || s.stable_count.len() != sp.cells
            || s.climates.len() != sp.cells
        {
            return Err(bad(
                at("regime"),
                format!("does not have the {} cells of the map", sp.cells),
            ));
        }
        for c in 0..sp.cells {
            let mask = s.regime[c];
            if mask & !all_bits != 0 {
                return Err(bad(
                    at(&format!("regime[{c}]")),
                    format!("= {mask} has bits of no climate state"),
                ));
            }
            let cl = &s.climates[c];
            if cl.len() != s.stable_count[c] as usize {
                return Err(bad(
                    at(&format!("stable_count[{c}]")),
                    format!(
                        "= {} but the cell lists {} climates",
                        s.stable_count[c],
                        cl.len()
                    ),
                ));
            }
            let mut seen = 0u32;
            for (q, x) in cl.iter().enumerate() {
                let ok = x.state.count_ones() == 1
                    && x.state & all_bits != 0
                    && x.global_mean_c.is_finite()
                    && x.global_mean_c >= crate::model::climate::ABSOLUTE_ZERO_C
                    && (-90.0..=90.0).contains(&x.ice_edge_north_deg)
                    && (-90.0..=90.0).contains(&x.ice_edge_south_deg);
                if !ok {
                    return Err(bad(
                        at(&format!("climates[{c}][{q}]")),
                        "is not a climate (unknown state, non-physical temperature or an edge outside -90..90 deg)".into(),
                    ));
                }
                if !(0.0..=1.0).contains(&x.habitable_fraction) {
                    return Err(bad(
                        at(&format!("climates[{c}][{q}].habitable_fraction")),
                        format!("= {} is out of range: allowed 0 to 1", x.habitable_fraction),
                    ));
                }
                seen |= x.state;
            }
            if seen != mask {
                return Err(bad(
                    at(&format!("regime[{c}]")),
                    format!("= {mask} disagrees with the cell's climates ({seen})"),
                ));
            }
        }
        for (q, p) in s.points.iter().enumerate() {
            if !(0.0..=1.0).contains(&p.habitable_fraction) {
                return Err(bad(
                    at(&format!("points[{q}].habitable_fraction")),
                    format!("= {} is out of range: allowed 0 to 1", p.habitable_fraction),
                ));
            }
            let ok = known(&p.state)
                && in_range(p.value)
                && p.global_mean_c.is_finite()
                && p.global_mean_c >= crate::model::climate::ABSOLUTE_ZERO_C
                && (0.0..=1.0).contains(&p.ice_area_fraction)
                && p.ice_edges_deg.iter().all(|e| (-90.0..=90.0).contains(e))
                && p.residual.is_finite()
                && p.residual >= 0.0;
            if !ok {
                return Err(bad(
                    at(&format!("points[{q}]")),
                    "is not a traced climate (unknown state, a value outside the traced range, or a temperature, ice fraction, edge or residual out of range)".into(),
                ));
            }
        }
        for (q, fo) in s.folds.iter().enumerate() {
            let ok = known(&fo.from_state)
                && (fo.to_state == "none" || known(&fo.to_state))
                && in_range(fo.value)
                && fo.global_mean_c.is_finite()
                && (-90.0..=90.0).contains(&fo.ice_edge_deg);
            if !ok {
                return Err(bad(
                    at(&format!("folds[{q}]")),
                    "is not a fold of the map (unknown state, a value outside the traced range or an edge out of range)".into(),
                ));
            }
        }
    }
    Ok(mm)
}

/// Runs `merge DIR...`: joins shard files into the outputs of a single run.
pub fn cmd_merge(args: &Args) -> Result<String, CliError> {
    if args.rest.is_empty() {
        return Err(usage(
            "merge needs one or more shard directories or files (see icefold --help)".into(),
        ));
    }
    let mut files: Vec<PathBuf> = Vec::new();
    for p in &args.rest {
        if p.is_dir() {
            let rd = std::fs::read_dir(p)
                .map_err(|e| usage(format!("cannot read {}: {e}", p.display())))?;
            let mut found: Vec<PathBuf> = rd
                .filter_map(|e| e.ok().map(|e| e.path()))
                .filter(|f| {
                    f.file_name()
                        .and_then(|n| n.to_str())
                        .is_some_and(|n| n.starts_with("shard-") && n.ends_with(".json"))
                })
                .collect();
            found.sort();
            if found.is_empty() {
                return Err(usage(format!("{}: no shard-*.json files", p.display())));
            }
            files.extend(found);
        } else {
            files.push(p.clone());
        }
    }
    let mut first: Option<ShardFile> = None;
    let mut slices: std::collections::BTreeMap<usize, Slice> = std::collections::BTreeMap::new();
    for f in &files {
        let shard = read_shard(f)?;
        if let Some(r) = &first {
            // the model first: shards of different models are different
            // scenarios too, but the model is what makes them incompatible
            if r.model != shard.model {
                return Err(usage(format!(
                    "{}: field `model` = `{}`, but the other shards were made by the {} model; shards of different models cannot be merged",
                    f.display(),
                    shard.model,
                    r.model
                )));
            }
            if r.spec != shard.spec {
                return Err(usage(format!(
                    "{}: a shard of a different map command (`{}` vs `{}`)",
                    f.display(),
                    shard.spec.command(),
                    r.spec.command()
                )));
            }
            if r.scenario != shard.scenario {
                return Err(usage(format!(
                    "{}: a shard of a different scenario",
                    f.display()
                )));
            }
            if r.tool != shard.tool {
                return Err(usage(format!(
                    "{}: written by {} but others by {}",
                    f.display(),
                    shard.tool,
                    r.tool
                )));
            }
        }
        for s in &shard.slices {
            if s.index >= shard.spec.slices()
                || s.regime.len() != shard.spec.cells
                || s.stable_count.len() != shard.spec.cells
                || s.climates.len() != shard.spec.cells
                || s.climates
                    .iter()
                    .zip(&s.stable_count)
                    .any(|(c, n)| c.len() != *n as usize)
            {
                return Err(usage(format!(
                    "{}: slice {} does not fit the map",
                    f.display(),
                    s.index
                )));
            }
            if let Some(old) = slices.get(&s.index)
                && old != s
            {
                return Err(usage(format!(
                    "{}: slice {} differs from another shard's",
                    f.display(),
                    s.index
                )));
            }
            slices.insert(s.index, s.clone());
        }
        if first.is_none() {
            first = Some(ShardFile {
                slices: Vec::new(),
                ..shard
            });
        }
    }
    let meta = first.ok_or_else(|| usage("no shards given".into()))?;
    let missing: Vec<usize> = (0..meta.spec.slices())
        .filter(|j| !slices.contains_key(j))
        .collect();
    if !missing.is_empty() {
        let list: Vec<String> = missing.iter().take(10).map(|j| j.to_string()).collect();
        return Err(usage(format!(
            "{} of {} slices missing (e.g. {}); run the remaining shards",
            missing.len(),
            meta.spec.slices(),
            list.join(", ")
        )));
    }
    let name = meta
        .scenario
        .get("name")
        .and_then(|v| v.as_str())
        .unwrap_or("")
        .to_string();
    let dir = args
        .out
        .clone()
        .unwrap_or_else(|| PathBuf::from("out").join("map"));
    let mut out = OutputSet::new();
    let sc = crate::io::scenario::Scenario::parse(&meta.scenario_toml, "shard", &[])
        .map_err(|e| usage(format!("shard scenario: {e}")))?;
    let mm = map_model(&sc)?;
    let tol = scenario_num(&meta.scenario, "solver.tolerance", 1e-10);
    let mut writer = MapWriter::new(&mm, &meta.spec, tol);
    // in slice order, each slice dropped from the shards' set as it is
    // written (its points into map.csv)
    while let Some((_, s)) = slices.pop_first() {
        writer.push(s)?;
    }
    let tally = writer.finish(
        &meta.scenario,
        &meta.scenario_toml,
        &name,
        &dir,
        &mut out,
        args.figures,
    )?;
    let written = super::context::publish(out, &dir, args)?;
    Ok(map_report(&mm, &meta.spec, tol, &tally) + &written_list(&written))
}
