//! `icefold sun`: daily-mean and annual-mean insolation of the orbit.

use super::context::{Args, CliError, load, out_dir, written_list};
use crate::io::export::{Cell, OutputSet, Table};
use crate::io::plot;

/// Runs `sun`.
pub fn cmd_sun(args: &Args) -> Result<String, CliError> {
    let sc = load(args)?;
    let model = sc.model();
    let ins = model.insolation();
    let dir = out_dir(args);
    const DAYS: usize = 365;
    let lats: Vec<f64> = (0..=180).map(|k| -90.0 + k as f64).collect();
    let days: Vec<f64> = (0..=DAYS).map(|d| d as f64).collect();
    let mut table = Table::new(&["latitude_deg", "day_of_year", "insolation_wm2"]);
    let mut field = vec![0.0; lats.len() * days.len()];
    for (j, lat) in lats.iter().enumerate() {
        let x = lat.to_radians().sin();
        for (i, d) in days.iter().enumerate() {
            let s = ins.daily(x, d / DAYS as f64);
            field[j * days.len() + i] = s;
            table.push_row(vec![Cell::Num(*lat), Cell::Num(*d), Cell::Num(s)]);
        }
    }
    let mut annual = Table::new(&["latitude_deg", "insolation_wm2"]);
    for (lat, x) in model.grid.latitudes_deg().iter().zip(&model.grid.centres) {
        annual.push_row(vec![Cell::Num(*lat), Cell::Num(ins.annual_mean(*x))]);
    }
    let fig = if !args.figures.any() {
        None
    } else {
        Some(plot::field_figure(
            args.figures,
            &format!("Daily-mean insolation: {}", sc.name()),
            plot::labels::DAY_OF_YEAR,
            plot::labels::LATITUDE,
            plot::labels::INSOLATION,
            &days,
            &lats,
            &field,
            &[],
            "",
        )?)
    };
    let mut out = OutputSet::new();
    out.add_table(dir.join("insolation.csv"), &table)?;
    out.add_table(dir.join("annual_insolation.csv"), &annual)?;
    if let Some(fig) = fig {
        fig.add_to(&mut out, &dir, "insolation");
    }
    out.add_text(dir.join("scenario.toml"), &sc.to_toml());
    let written = super::context::publish(out, &dir, args)?;
    let g = &model.grid;
    let mean: f64 = g
        .weights
        .iter()
        .zip(&g.centres)
        .map(|(w, x)| w * ins.annual_mean(*x))
        .sum();
    let mut s = format!(
        "{}: annual global mean {:.3} W m-2 (S0/4 = {:.3}); equator {:.2}, pole {:.2} W m-2\n",
        sc.name(),
        mean,
        model.planet.orbit.flux / 4.0,
        ins.annual_mean(0.0),
        ins.annual_mean(1.0)
    );
    if let crate::physics::insolation::InsolationLaw::Legendre { .. } = model.planet.insolation {
        s += "note: insolation.kind = \"legendre\" has no seasons; the daily values equal the annual mean\n";
    }
    s += &written_list(&written);
    Ok(s)
}
