//! One periodic climate sampled through its year ([`Cycle`]): the
//! surface temperature, ice, energy budget and habitability of every time
//! step, and the diagnostics of its annual mean.

use crate::model::Model;
use crate::model::climate::diagnose;
use crate::model::seasonal::{DAYS_PER_YEAR, SeasonalError, SeasonalModel};
/// The most poleward ice edge of each hemisphere, deg, (north, south), by
/// the conventions of [`crate::model::climate::hemisphere_ice_edges`]: 90
/// (-90) with no ice in the hemisphere, 0 when all of it is ice.
pub fn polar_ice_edges(model: &Model, t: &[f64]) -> (f64, f64) {
    crate::model::climate::ice_edges_deg(model, t)
}

/// One periodic climate sampled through the year.
#[derive(Clone, Debug)]
pub struct Cycle {
    /// Year fraction of each sample, k/N, k = 0..N-1.
    pub times: Vec<f64>,
    /// Surface temperature per band at each sample (sample 0 is the start
    /// state, sample k ≥ 1 the state after step k-1), °C.
    pub states: Vec<Vec<f64>>,
    /// Global mean temperature per sample, °C.
    pub global_mean_c: Vec<f64>,
    /// Ice area fraction per sample.
    pub ice_area_fraction: Vec<f64>,
    /// Northern and southern polar ice edges per sample, deg ([`polar_ice_edges`]).
    pub ice_edges_deg: Vec<(f64, f64)>,
    /// Global net top-of-atmosphere flux per sample with the insolation of
    /// the step that ends there, W m-2.
    pub toa_net: Vec<f64>,
    /// Annual-mean temperature per band (mean of the samples), °C.
    pub annual_mean: Vec<f64>,
    /// Annual mean of the global net top-of-atmosphere flux, W m-2
    /// (zero for an exactly periodic backward-Euler cycle: Σ_k C (Tᵏ⁺¹ - Tᵏ) = 0).
    pub toa_annual_mean: f64,
    /// Largest minus smallest temperature over the year per band, K: the
    /// seasonal temperature range.
    pub amplitude: Vec<f64>,
    /// Sea-ice thickness per sample and band, m (zero without sea ice).
    pub ice_thickness: Vec<Vec<f64>>,
    /// Per sample the profile whose sign marks the ice (below the model's
    /// albedo threshold: T itself, or E/c_w with threshold 0 with sea ice).
    pub ice_profiles: Vec<Vec<f64>>,
    /// Instantaneous habitable fraction of the surface per sample,
    /// H(t_k) = [`Model::habitable_fraction`] of sample k.
    pub habitable_fraction: Vec<f64>,
    /// Per band, the fraction of the year it is habitable (the temporal
    /// habitability of Spiegel, Menou & Scharf 2008, ApJ 681, 1609), over
    /// the band's area: (1/N) Σ_k h_i(t_k) with h_i the habitable share of
    /// band i's area at sample k ([`Model::habitable_band_fractions`]; for
    /// a band wholly in or out of the range at each sample it is the
    /// fraction of samples in which it is habitable).
    pub habitable_year_fraction: Vec<f64>,
    /// Year-mean habitable fraction (1/N) Σ_k H(t_k); equal to Σ_i w_i
    /// times [`Cycle::habitable_year_fraction`] to rounding.
    pub habitable_year_mean: f64,
}

impl Cycle {
    /// (day of year, fraction) of the smallest and of the largest ice area.
    pub fn ice_extremes(&self) -> ((f64, f64), (f64, f64)) {
        let mut lo = (0.0, f64::INFINITY);
        let mut hi = (0.0, f64::NEG_INFINITY);
        for (k, &f) in self.ice_area_fraction.iter().enumerate() {
            let day = self.times[k] * DAYS_PER_YEAR;
            if f < lo.1 {
                lo = (day, f);
            }
            if f > hi.1 {
                hi = (day, f);
            }
        }
        (lo, hi)
    }

    /// Extremes of one ice edge over the year: ((day, latitude) where it is
    /// most equatorward, (day, latitude) where it is most poleward), for
    /// the northern (`north = true`) or southern edge ([`polar_ice_edges`]).
    pub fn edge_extremes(&self, north: bool) -> ((f64, f64), (f64, f64)) {
        let mut equatorward = (0.0, f64::INFINITY);
        let mut poleward = (0.0, f64::NEG_INFINITY);
        for (k, &(n, s)) in self.ice_edges_deg.iter().enumerate() {
            let day = self.times[k] * DAYS_PER_YEAR;
            // distance from the equator: |latitude|
            let e = if north { n } else { s };
            if e.abs() < equatorward.1.abs() {
                equatorward = (day, e);
            }
            if e.abs() > poleward.1.abs() || poleward.1.is_infinite() {
                poleward = (day, e);
            }
        }
        (equatorward, poleward)
    }
}

/// Integrates one year from `u` and records the cycle (allocates; for
/// output). For a periodic `u` the year closes on itself.
pub fn cycle(sm: &mut SeasonalModel, u: &[f64]) -> Result<Cycle, SeasonalError> {
    let n = sm.len();
    let steps = sm.steps_per_year();
    let mut t = u.to_vec();
    // per step: surface temperature, model state
    let mut after: Vec<(Vec<f64>, Vec<f64>)> = Vec::with_capacity(steps);
    let mut toa = vec![0.0; steps];
    for k in 0..steps {
        sm.step(k, &mut t, false)?;
        toa[(k + 1) % steps] = sm.toa_net(k, &t);
        after.push((sm.surface_temperature(&t).to_vec(), t.clone()));
    }
    // sample 0 is u itself (≡ the state after the last step for a periodic
    // u; with sea ice its surface temperature is that of the last step)
    let mut states = Vec::with_capacity(steps);
    let mut raw = Vec::with_capacity(steps);
    let last = after
        .last()
        .map(|a| a.0.clone())
        .unwrap_or_else(|| u.to_vec());
    states.push(if sm.has_sea_ice() { last } else { u.to_vec() });
    raw.push(u.to_vec());
    for (s, r) in after.into_iter().take(steps - 1) {
        states.push(s);
        raw.push(r);
    }
    let ice_profiles: Vec<Vec<f64>> = raw.iter().map(|r| sm.ice_profile(r)).collect();
    let ice_thickness: Vec<Vec<f64>> = raw.iter().map(|r| sm.ice_thickness(r)).collect();
    let model = sm.model().clone();
    let g = &model.grid;
    let mut annual = vec![0.0; n];
    let mut tmin = vec![f64::INFINITY; n];
    let mut tmax = vec![f64::NEG_INFINITY; n];
    let mut year_fraction = vec![0.0; n];
    let mut share = vec![0.0; n];
    for s in &states {
        model.habitable_band_fractions(s, &mut share);
        for i in 0..n {
            annual[i] += s[i] / steps as f64;
            tmin[i] = tmin[i].min(s[i]);
            tmax[i] = tmax[i].max(s[i]);
            year_fraction[i] += share[i] / steps as f64;
        }
    }
    let habitable: Vec<f64> = states.iter().map(|s| model.habitable_fraction(s)).collect();
    let habitable_year_mean = (habitable.iter().sum::<f64>() / steps as f64).clamp(0.0, 1.0);
    for f in &mut year_fraction {
        *f = f.clamp(0.0, 1.0);
    }
    Ok(Cycle {
        times: (0..steps).map(|k| k as f64 / steps as f64).collect(),
        global_mean_c: states.iter().map(|s| g.mean(s)).collect(),
        ice_area_fraction: ice_profiles
            .iter()
            .map(|s| model.ice_area_fraction(s))
            .collect(),
        ice_edges_deg: ice_profiles
            .iter()
            .map(|s| polar_ice_edges(&model, s))
            .collect(),
        ice_thickness,
        ice_profiles,
        toa_annual_mean: toa.iter().sum::<f64>() / steps as f64,
        toa_net: toa,
        annual_mean: annual,
        amplitude: tmax.iter().zip(&tmin).map(|(a, b)| a - b).collect(),
        habitable_fraction: habitable,
        habitable_year_fraction: year_fraction,
        habitable_year_mean,
        states,
    })
}

/// What a traced point needs of its cycle, without the rest of
/// [`cycle`]: the annual-mean profile Σ_k s_k / N, the annual mean of the
/// profiles that mark the ice ([`Cycle::ice_profiles`]) and the year mean
/// of the habitable fraction, over the same samples s_k and in the same
/// order as [`cycle`] (so each equals its counterpart there bit for bit),
/// skipping the per-step fluxes, edges, areas and thicknesses.
pub fn cycle_summary(
    sm: &mut SeasonalModel,
    u: &[f64],
) -> Result<(Vec<f64>, Vec<f64>, f64), SeasonalError> {
    let n = sm.len();
    let steps = sm.steps_per_year();
    let mut t = u.to_vec();
    // per step after the first sample: surface temperature and ice profile
    let mut surface = Vec::with_capacity(steps * n);
    let mut ice = Vec::with_capacity(steps * n);
    for k in 0..steps {
        sm.step(k, &mut t, false)?;
        surface.extend_from_slice(sm.surface_temperature(&t));
        ice.extend(sm.ice_profile(&t));
    }
    let first_surface = if sm.has_sea_ice() {
        surface[(steps - 1) * n..].to_vec()
    } else {
        u.to_vec()
    };
    let first_ice = sm.ice_profile(u);
    let sample = |all: &[f64], first: &[f64], k: usize| -> Vec<f64> {
        if k == 0 {
            first.to_vec()
        } else {
            all[(k - 1) * n..k * n].to_vec()
        }
    };
    let model = sm.model();
    let mut annual = vec![0.0; n];
    let mut ice_mean = vec![0.0; n];
    let mut habitable = 0.0;
    for k in 0..steps {
        let s = sample(&surface, &first_surface, k);
        let p = sample(&ice, &first_ice, k);
        for i in 0..n {
            annual[i] += s[i] / steps as f64;
            ice_mean[i] += p[i] / steps as f64;
        }
        habitable += model.habitable_fraction(&s);
    }
    Ok((annual, ice_mean, (habitable / steps as f64).clamp(0.0, 1.0)))
}

/// [`cycle_diagnostics`] from a [`cycle_summary`]'s annual-mean profile
/// and ice mean.
pub fn summary_diagnostics(
    annual_model: &Model,
    annual_mean: &[f64],
    ice_mean: &[f64],
) -> crate::model::climate::Diagnostics {
    if ice_mean == annual_mean {
        return diagnose(annual_model, annual_mean);
    }
    let t = diagnose(annual_model, annual_mean);
    let mut d = diagnose(annual_model, ice_mean);
    d.global_mean_c = t.global_mean_c;
    d.energy_imbalance = t.energy_imbalance;
    d
}

/// Diagnostics of a cycle's annual-mean profile under the annual-mean
/// insolation: the temperatures from the annual-mean surface temperature,
/// the ice (area, edges, state, albedo) from the annual mean of the
/// profiles that mark it ([`Cycle::ice_profiles`]: with sea ice, where the
/// annual-mean enthalpy is negative).
pub fn cycle_diagnostics(annual_model: &Model, c: &Cycle) -> crate::model::climate::Diagnostics {
    let steps = c.ice_profiles.len().max(1) as f64;
    let n = c.annual_mean.len();
    let mut ice = vec![0.0; n];
    for p in &c.ice_profiles {
        for i in 0..n {
            ice[i] += p[i] / steps;
        }
    }
    summary_diagnostics(annual_model, &c.annual_mean, &ice)
}

/// The annual-mean albedo per band that the model applies through the
/// cycle: ᾱ_i = (1/N) Σ_k [1 - a_i(p_k)/S_i], the mean over the N samples
/// of the band albedo of each sample's ice ([`Cycle::ice_profiles`] p_k:
/// with sea ice p_k = E_k/c_w, ice where the enthalpy is negative, Wagner &
/// Eisenman 2015 section 2b; without it the temperature itself), each band
/// albedo 1 - a/S taken with the sub-grid step of
/// [`crate::model::subgrid`] under the annual-mean insolation S_i of
/// `annual_model` (the model's internal threshold: 0 on E/c_w with sea
/// ice). Not the albedo of the annual-mean temperature: over seasonal sea
/// ice the annual-mean surface temperature can lie below the freezing point
/// while the band is open water for part of the year. Bands without
/// insolation report 0.
pub fn annual_albedo(annual_model: &Model, c: &Cycle) -> Vec<f64> {
    let n = annual_model.len();
    let steps = c.ice_profiles.len().max(1) as f64;
    let mut mean = vec![0.0; n];
    for p in &c.ice_profiles {
        let fl = annual_model.band_fluxes(p);
        for (m, (s, a)) in mean.iter_mut().zip(fl.insolation.iter().zip(&fl.absorbed)) {
            if *s > 0.0 {
                *m += (1.0 - a / s) / steps;
            }
        }
    }
    mean
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::io::scenario::Scenario;

    /// The summary a traced point uses equals the full cycle's fields bit
    /// for bit, with and without sea ice (common practice, no source: two
    /// codes for one sum).
    #[test]
    fn cycle_summary_equals_the_full_cycle() {
        let small = [
            "grid.bands=16".to_string(),
            "seasons.steps_per_year=12".to_string(),
        ];
        let sea_ice = concat!(env!("CARGO_MANIFEST_DIR"), "/scenarios/sea-ice.toml");
        for path in [None, Some(std::path::Path::new(sea_ice))] {
            let mut sets = small.to_vec();
            sets.push("seasons.enabled=true".into());
            let sc = Scenario::load(path, &sets).unwrap();
            let mut sm = sc.seasonal_model().unwrap();
            let n = sm.len();
            let mut u = sm.state_from_temperature(&vec![5.0; n]);
            for _ in 0..5 {
                sm.year(&mut u).unwrap();
            }
            let c = cycle(&mut sm, &u).unwrap();
            let (annual, ice, habitable) = cycle_summary(&mut sm, &u).unwrap();
            assert_eq!(annual, c.annual_mean);
            assert_eq!(habitable, c.habitable_year_mean);
            let am = sm.annual_model();
            assert_eq!(
                format!("{:?}", summary_diagnostics(&am, &annual, &ice)),
                format!("{:?}", cycle_diagnostics(&am, &c))
            );
            // a cycle with seasons: the samples differ
            assert!(c.amplitude.iter().any(|a| *a > 0.1));
        }
    }
}
