//! `icefold solve`: equilibria from warm, cold and given starts.

use super::context::{
    Args, CliError, load, newton_options, out_dir, provenance, read_start, report_starts,
    written_list,
};
use crate::io::export::{Cell, OutputSet, Table};
use crate::io::plot;
use crate::model::climate::{Equilibrium, find_equilibria, standard_starts};

fn equilibrium_json(id: usize, e: &Equilibrium) -> serde_json::Value {
    let d = &e.diagnostics;
    serde_json::json!({
        "equilibrium": id,
        "start": e.start,
        "global_mean_temperature_c": d.global_mean_c,
        "ice_area_fraction": d.ice_area_fraction,
        "ice_edges_deg": d.ice_edges_deg,
        "habitable_fraction": d.habitable_fraction,
        "planetary_albedo": d.planetary_albedo,
        "state": d.state.label(),
        "stable": e.unstable_modes == 0,
        "unstable_modes": e.unstable_modes,
        "energy_imbalance_wm2": d.energy_imbalance,
        "residual_wm2": e.residual,
        "newton_iterations": e.newton_iterations,
        "spun_up_first": e.spun_up,
    })
}

/// Runs `solve`.
pub fn cmd_solve(args: &Args) -> Result<String, CliError> {
    let sc = load(args)?;
    if sc.flag("seaice.enabled") {
        return Err(CliError::Usage(
            "`seaice.enabled` = true: solve finds annual-mean equilibria, which have no sea ice; use `icefold periodic` for the climates of the sea-ice model".into(),
        ));
    }
    let model = sc.model();
    let mut starts = standard_starts(
        model.len(),
        sc.num("solver.warm_start"),
        sc.num("solver.cold_start"),
    );
    if let Some(p) = &args.start {
        starts.push(read_start(p, &model)?);
    }
    let search = find_equilibria(&model, &starts, &newton_options(&sc));
    report_starts(
        args.quiet,
        &search.failures,
        search.equilibria.len(),
        "an",
        "equilibrium",
    )?;
    let dir = out_dir(args);
    let mut out = OutputSet::new();
    let lat = model.grid.latitudes_deg();
    let mut table = Table::new(&[
        "equilibrium",
        "latitude_deg",
        "sin_latitude",
        "temperature_c",
        "albedo",
        "insolation_wm2",
        "absorbed_wm2",
        "olr_wm2",
        "transport_wm2",
        "habitable_fraction",
    ]);
    let mut curves = Vec::new();
    let mut band_habitable = vec![0.0; model.len()];
    for (k, e) in search.equilibria.iter().enumerate() {
        model.habitable_band_fractions(&e.temperature, &mut band_habitable);
        let fl = model.band_fluxes(&e.temperature);
        let albedo: Vec<f64> = fl
            .insolation
            .iter()
            .zip(&fl.absorbed)
            .map(|(s, a)| {
                if *s > 0.0 {
                    1.0 - a / s
                } else {
                    1.0 - model.planet.albedo.open
                }
            })
            .collect();
        for i in 0..model.len() {
            table.push_row(vec![
                Cell::Int(k as i64 + 1),
                Cell::Num(lat[i]),
                Cell::Num(model.grid.centres[i]),
                Cell::Num(e.temperature[i]),
                Cell::Num(albedo[i]),
                Cell::Num(fl.insolation[i]),
                Cell::Num(fl.absorbed[i]),
                Cell::Num(fl.olr[i]),
                Cell::Num(fl.transport[i]),
                Cell::Num(band_habitable[i]),
            ]);
        }
        curves.push(plot::ProfileCurve {
            label: format!("{}", k + 1),
            state: e.diagnostics.state.label().into(),
            latitude_deg: lat.clone(),
            temperature_c: e.temperature.clone(),
            albedo,
            ice_edges_deg: e.diagnostics.ice_edges_deg.clone(),
            stable: e.unstable_modes == 0,
        });
    }
    let mut summary = provenance(&sc, args);
    summary.insert(
        "equilibria".into(),
        search
            .equilibria
            .iter()
            .enumerate()
            .map(|(k, e)| equilibrium_json(k + 1, e))
            .collect(),
    );
    summary.insert(
        "failed_starts".into(),
        search
            .failures
            .iter()
            .map(|(l, e)| serde_json::json!({"start": l, "reason": e.to_string()}))
            .collect(),
    );
    out.add_table(dir.join("profile.csv"), &table)?;
    out.add_json(dir.join("summary.json"), &summary);
    if args.figures.any() {
        let title = format!("Equilibrium climates: {}", sc.name());
        plot::profile_figure(args.figures, &title, &curves)?.add_to(&mut out, &dir, "profiles");
    }
    out.add_text(dir.join("scenario.toml"), &sc.to_toml());
    let written = super::context::publish(out, &dir, args)?;
    let mut s = format!("{}: {} equilibria\n", sc.name(), search.equilibria.len());
    s += "  #  state            global mean C  ice fraction  habitable  ice edges (deg N)  stable  iterations\n";
    for (k, e) in search.equilibria.iter().enumerate() {
        let d = &e.diagnostics;
        let edges: Vec<String> = d.ice_edges_deg.iter().map(|x| format!("{x:.2}")).collect();
        s += &format!(
            "  {:<2} {:<16} {:>13.3}  {:>12.4}  {:>9.4}  {:<17}  {:<6}  {}\n",
            k + 1,
            d.state.label(),
            d.global_mean_c,
            d.ice_area_fraction,
            d.habitable_fraction,
            if edges.is_empty() {
                "-".into()
            } else {
                edges.join(", ")
            },
            if e.unstable_modes == 0 { "yes" } else { "no" },
            e.newton_iterations
        );
    }
    s += &written_list(&written);
    Ok(s)
}
