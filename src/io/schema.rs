//! The scenario key schema: the single source of every key's kind,
//! default, unit, allowed range and meaning.

/// The value kind and allowed range of a key.
#[derive(Clone, Copy, Debug)]
pub enum Kind {
    /// Float in [lo, hi] (both finite; `open_lo` excludes lo).
    Num {
        /// Lower bound.
        lo: f64,
        /// Upper bound.
        hi: f64,
        /// Whether lo itself is excluded.
        open_lo: bool,
    },
    /// Integer in [lo, hi].
    Int {
        /// Lower bound.
        lo: i64,
        /// Upper bound.
        hi: i64,
    },
    /// Boolean.
    Bool,
    /// One of the listed words.
    Choice(&'static [&'static str]),
    /// Free text of at most `max` characters, without control characters
    /// other than line breaks and tabs.
    Text {
        /// Largest number of characters.
        max: usize,
    },
}

/// One documented scenario key.
#[derive(Clone, Copy, Debug)]
pub struct KeySpec {
    /// `section.name`, or `name` at top level.
    pub key: &'static str,
    /// Human label for axes and tables, without the unit ("Stellar flux S0").
    pub label: &'static str,
    /// Kind and range.
    pub kind: Kind,
    /// Default as TOML text.
    pub default: &'static str,
    /// Unit ("" when dimensionless).
    pub unit: &'static str,
    /// Meaning.
    pub doc: &'static str,
}

const fn num(lo: f64, hi: f64) -> Kind {
    Kind::Num {
        lo,
        hi,
        open_lo: false,
    }
}
const fn pos(hi: f64) -> Kind {
    Kind::Num {
        lo: 0.0,
        hi,
        open_lo: true,
    }
}

/// The schema: every key a scenario may hold.
pub const SCHEMA: &[KeySpec] = &[
    KeySpec {
        key: "name",
        label: "Scenario name",
        kind: Kind::Text { max: 100 },
        default: "\"unnamed\"",
        unit: "",
        doc: "Short name of the scenario.",
    },
    KeySpec {
        key: "description",
        label: "Description",
        kind: Kind::Text { max: 4000 },
        default: "\"\"",
        unit: "",
        doc: "Free text (no control characters but line breaks and tabs).",
    },
    KeySpec {
        key: "grid.bands",
        label: "Latitude bands",
        kind: Kind::Int { lo: 4, hi: 20000 },
        default: "90",
        unit: "",
        doc: "Number of latitude bands (pole to pole, or equator to pole if symmetric).",
    },
    KeySpec {
        key: "grid.spacing",
        label: "Band spacing",
        kind: Kind::Choice(&["sine", "latitude"]),
        default: "\"sine\"",
        unit: "",
        doc: "Equal steps in sin(latitude) (equal areas) or in latitude.",
    },
    KeySpec {
        key: "grid.symmetric",
        label: "Hemispheric symmetry",
        kind: Kind::Bool,
        default: "false",
        unit: "",
        doc: "Model the northern hemisphere only, mirrored at the equator.",
    },
    KeySpec {
        key: "orbit.flux",
        label: "Stellar flux S0",
        kind: pos(1e5),
        default: "1361.0",
        unit: "W m-2",
        doc: "Stellar flux at the semi-major axis, S0.",
    },
    KeySpec {
        key: "orbit.obliquity",
        label: "Obliquity",
        kind: num(0.0, 180.0),
        default: "23.44",
        unit: "deg",
        doc: "Obliquity (axial tilt).",
    },
    KeySpec {
        key: "orbit.eccentricity",
        label: "Eccentricity",
        kind: num(0.0, 0.9),
        default: "0.0",
        unit: "",
        doc: "Orbital eccentricity.",
    },
    KeySpec {
        key: "orbit.perihelion",
        label: "Longitude of perihelion",
        kind: num(0.0, 360.0),
        default: "283.0",
        unit: "deg",
        doc: "Solar longitude at perihelion, from the northern spring equinox.",
    },
    KeySpec {
        key: "insolation.kind",
        label: "Insolation law",
        kind: Kind::Choice(&["orbital", "legendre", "idealised"]),
        default: "\"orbital\"",
        unit: "",
        doc: "Exact annual mean over the orbit (Berger 1978), (S0/4)(1 + p2 P2(x)) (North 1975), or the seasonal max(0, S0 + S1 x sin 2πt - S2 x²) of Wagner & Eisenman (2015), t = 0 at the northern spring equinox, S0 = orbit.flux/4 + S2/3.",
    },
    KeySpec {
        key: "insolation.p2",
        label: "Insolation P2 coefficient p2",
        kind: num(-1.0, 2.0),
        default: "-0.482",
        unit: "",
        doc: "P2 coefficient of the Legendre law.",
    },
    KeySpec {
        key: "insolation.s1",
        label: "Seasonal amplitude S1",
        kind: num(0.0, 1e4),
        default: "338.0",
        unit: "W m-2",
        doc: "S1 of the idealised law (Wagner & Eisenman 2015, Table 1: 338 W m-2); scales with orbit.flux.",
    },
    KeySpec {
        key: "insolation.s2",
        label: "Equator-to-pole contrast S2",
        kind: num(-1e4, 1e4),
        default: "240.0",
        unit: "W m-2",
        doc: "S2 of the idealised law (Wagner & Eisenman 2015, Table 1: 240 W m-2); -3 flux/4 to 1.5 flux/4 so that the annual mean stays non-negative; scales with orbit.flux.",
    },
    KeySpec {
        key: "radiation.kind",
        label: "Outgoing longwave law",
        kind: Kind::Choice(&["linear", "greybody"]),
        default: "\"linear\"",
        unit: "",
        doc: "OLR = A + B T (Budyko 1969) or emissivity * sigma * T^4.",
    },
    KeySpec {
        key: "radiation.a",
        label: "OLR coefficient A",
        kind: num(-1e4, 1e4),
        default: "203.3",
        unit: "W m-2",
        doc: "A of the linear law (OLR at 0 C).",
    },
    KeySpec {
        key: "radiation.b",
        label: "OLR coefficient B",
        kind: pos(1e3),
        default: "2.09",
        unit: "W m-2 K-1",
        doc: "B of the linear law.",
    },
    KeySpec {
        key: "radiation.emissivity",
        label: "Emissivity",
        kind: Kind::Num {
            lo: 0.0,
            hi: 1.0,
            open_lo: true,
        },
        default: "0.61",
        unit: "",
        doc: "Emissivity of the grey-body law.",
    },
    KeySpec {
        key: "radiation.co2_ppm",
        label: "CO2",
        kind: pos(1e6),
        default: "280.0",
        unit: "ppm",
        doc: "CO2; forcing 5.35 ln(co2/co2_ref) W m-2 is subtracted from the OLR (Myhre et al. 1998).",
    },
    KeySpec {
        key: "radiation.co2_ref_ppm",
        label: "Reference CO2",
        kind: pos(1e6),
        default: "280.0",
        unit: "ppm",
        doc: "CO2 at which the forcing is zero.",
    },
    KeySpec {
        key: "radiation.forcing",
        label: "Radiative forcing F",
        kind: num(-1e3, 1e3),
        default: "0.0",
        unit: "W m-2",
        doc: "Added to the absorbed flux in every model (the forcing F of Wagner & Eisenman 2015); continuation and maps may vary it.",
    },
    KeySpec {
        key: "albedo.kind",
        label: "Albedo law",
        kind: Kind::Choice(&["step", "smooth"]),
        default: "\"step\"",
        unit: "",
        doc: "Step at the threshold (sub-grid ice edge) or tanh ramp.",
    },
    KeySpec {
        key: "albedo.open",
        label: "Open-surface albedo",
        kind: num(0.0, 1.0),
        default: "0.319",
        unit: "",
        doc: "Open-surface albedo (at P2(x) = 0).",
    },
    KeySpec {
        key: "albedo.open_p2",
        label: "Open-surface albedo P2 coefficient",
        kind: num(-1.0, 1.0),
        default: "0.202",
        unit: "",
        doc: "P2 coefficient of the open-surface albedo (North et al. 1981); jointly with albedo.open, open + open_p2 P2(x) must stay in [0, 1] for every latitude.",
    },
    KeySpec {
        key: "albedo.ice",
        label: "Ice albedo",
        kind: num(0.0, 1.0),
        default: "0.62",
        unit: "",
        doc: "Ice albedo.",
    },
    KeySpec {
        key: "albedo.threshold",
        label: "Ice threshold temperature",
        kind: num(-150.0, 100.0),
        default: "-10.0",
        unit: "C",
        doc: "Temperature below which the surface is ice.",
    },
    KeySpec {
        key: "albedo.width",
        label: "Albedo ramp width",
        kind: pos(100.0),
        default: "2.0",
        unit: "K",
        doc: "Ramp width of the smooth law.",
    },
    KeySpec {
        key: "transport.kind",
        label: "Heat transport law",
        kind: Kind::Choice(&["diffusive", "relaxation", "moist"]),
        default: "\"diffusive\"",
        unit: "",
        doc: "D d/dx[(1-x^2) dT/dx] (North 1975), gamma (Tbar - T) (Budyko 1969), or D d/dx[(1-x^2) dh/dx] with the moist static energy h = T + (L_v r/c_p) q_s(T) (as in Hwang & Frierson 2010; q_s from Bolton 1980, L_v = 2.5e6 J kg-1, c_p = 1004 J kg-1 K-1). The sea-ice model takes \"diffusive\" or \"moist\".",
    },
    KeySpec {
        key: "transport.diffusivity",
        label: "Diffusivity D",
        kind: num(0.0, 1e3),
        default: "0.649",
        unit: "W m-2 K-1",
        doc: "D of diffusive and of moist transport.",
    },
    KeySpec {
        key: "transport.relative_humidity",
        label: "Relative humidity r",
        kind: num(0.0, 1.0),
        default: "0.8",
        unit: "",
        doc: "r of moist transport (only transport.kind = \"moist\" uses it); 0 gives the dry diffusive law exactly. The default 0.8 is the value of Hwang & Frierson (2010), from memory.",
    },
    KeySpec {
        key: "transport.surface_pressure",
        label: "Surface pressure p",
        kind: num(100.0, 10000.0),
        default: "1013.25",
        unit: "hPa",
        doc: "p in q_s = 0.622 e_s/(p - 0.378 e_s), e_s = 6.112 hPa exp(17.67 T/(T + 243.5)) (Bolton 1980, eq. 10; T in C); only transport.kind = \"moist\" uses it. 1013.25 hPa is the standard atmosphere.",
    },
    KeySpec {
        key: "transport.relaxation",
        label: "Relaxation rate gamma",
        kind: num(0.0, 1e3),
        default: "3.04",
        unit: "W m-2 K-1",
        doc: "gamma of relaxation transport.",
    },
    KeySpec {
        key: "seasons.enabled",
        label: "Seasonal cycle",
        kind: Kind::Bool,
        default: "false",
        unit: "",
        doc: "Trace and map the seasonal model (periodic climates) with `trace` and `map`; `periodic` and `run` always use it.",
    },
    KeySpec {
        key: "seasons.mixed_layer_depth",
        label: "Mixed-layer depth",
        kind: pos(1e4),
        default: "75.0",
        unit: "m",
        doc: "Ocean mixed-layer depth; C = rho c_p h (75 m gives 9.7 W yr m-2 K-1).",
    },
    KeySpec {
        key: "seasons.land_fraction",
        label: "Land fraction",
        kind: num(0.0, 1.0),
        default: "0.0",
        unit: "",
        doc: "Land fraction of every band.",
    },
    KeySpec {
        key: "seasons.land_heat_capacity",
        label: "Land heat capacity",
        kind: pos(1e3),
        default: "0.45",
        unit: "W yr m-2 K-1",
        doc: "Heat capacity of land.",
    },
    KeySpec {
        key: "seasons.steps_per_year",
        label: "Time steps per year",
        kind: Kind::Int { lo: 12, hi: 100000 },
        default: "360",
        unit: "",
        doc: "Implicit time steps per year.",
    },
    KeySpec {
        key: "seaice.enabled",
        label: "Sea-ice thermodynamics",
        kind: Kind::Bool,
        default: "false",
        unit: "",
        doc: "The seasonal model carries the surface enthalpy E (Wagner & Eisenman 2015): open water where E >= 0, ice of thickness -E/latent_heat where E < 0 (albedo.threshold is then not used). Needs seasons.enabled for `trace` and `map`, diffusive or moist transport and no land.",
    },
    KeySpec {
        key: "seaice.thermodynamics",
        label: "Ice thermodynamics",
        kind: Kind::Bool,
        default: "true",
        unit: "",
        doc: "false: no latent heat and no insulation: the surface temperature is freezing_point + E/c_w also under ice, which is then only an albedo (no thickness); the sea-ice model becomes the seasonal model with its albedo step at freezing_point (Wagner & Eisenman 2015 without sea-ice thermodynamics).",
    },
    KeySpec {
        key: "seaice.conductivity",
        label: "Ice conductivity k",
        kind: pos(100.0),
        default: "2.0",
        unit: "W m-1 K-1",
        doc: "Thermal conductivity of sea ice (Wagner & Eisenman 2015, Table 1: 2).",
    },
    KeySpec {
        key: "seaice.latent_heat",
        label: "Latent heat of fusion Lf",
        kind: pos(1e3),
        default: "9.5",
        unit: "W yr m-3",
        doc: "Per volume of ice (Wagner & Eisenman 2015, Table 1: 9.5).",
    },
    KeySpec {
        key: "seaice.ocean_heat_flux",
        label: "Ocean heat flux Fb",
        kind: num(-100.0, 100.0),
        default: "4.0",
        unit: "W m-2",
        doc: "Heat flux into the mixed layer from below, everywhere (Wagner & Eisenman 2015, Table 1: 4).",
    },
    KeySpec {
        key: "seaice.freezing_point",
        label: "Freezing point Tm",
        kind: num(-10.0, 10.0),
        default: "0.0",
        unit: "C",
        doc: "Freezing and melting point of the surface (Wagner & Eisenman 2015: 0 C).",
    },
    KeySpec {
        key: "habitability.min_c",
        label: "Lowest habitable temperature",
        kind: num(-150.0, 500.0),
        default: "0.0",
        unit: "C",
        doc: "A surface counts as habitable where min_c <= T <= max_c (liquid water at 1 bar by default; Spiegel, Menou & Scharf 2008); must be below habitability.max_c. A diagnostic only: no law depends on it.",
    },
    KeySpec {
        key: "habitability.max_c",
        label: "Highest habitable temperature",
        kind: num(-150.0, 500.0),
        default: "100.0",
        unit: "C",
        doc: "Upper end of the habitable temperatures; must be above habitability.min_c.",
    },
    KeySpec {
        key: "weathering.present_rate",
        label: "Present weathering rate W0",
        kind: pos(1e6),
        default: "7.0",
        unit: "bar Gyr-1",
        doc: "Silicate weathering of the reference climate (weathering.reference_temperature, reference_co2_ppm, no ice), W0 in W = W0 (P/P0)^beta exp((T_w - T0)/T_e) (1 - f_ice) (Walker, Hays & Kasting 1981); 7 bar Gyr-1 balances the present outgassing of Menou (2015), from memory. Used by `thermostat`.",
    },
    KeySpec {
        key: "weathering.outgassing",
        label: "Outgassing V",
        kind: pos(1e6),
        default: "7.0",
        unit: "bar Gyr-1",
        doc: "Volcanic CO2 outgassing V in dP/dt = V - W; the default equals the default present_rate (present-day balance). `thermostat --outgassing` replaces it.",
    },
    KeySpec {
        key: "weathering.co2_exponent",
        label: "Weathering CO2 exponent beta",
        kind: num(0.0, 2.0),
        default: "0.5",
        unit: "",
        doc: "beta in (P/P0)^beta: 0.5 for a planet without land plants (Menou 2015; Abbot 2016), 0.3 in Walker, Hays & Kasting (1981); both from memory.",
    },
    KeySpec {
        key: "weathering.efold_temperature",
        label: "Weathering e-folding temperature Te",
        kind: pos(1000.0),
        default: "13.7",
        unit: "K",
        doc: "T_e in exp((T_w - T0)/T_e), T_w the mean temperature of the open surface (Walker, Hays & Kasting 1981: 13.7 K, from memory).",
    },
    KeySpec {
        key: "weathering.reference_temperature",
        label: "Weathering reference temperature T0",
        kind: num(-100.0, 200.0),
        default: "15.0",
        unit: "C",
        doc: "T0, the open-surface temperature at which W = W0 (288 K, present Earth).",
    },
    KeySpec {
        key: "weathering.reference_co2_ppm",
        label: "Weathering reference CO2 P0",
        kind: pos(1e6),
        default: "280.0",
        unit: "ppm",
        doc: "P0, the CO2 at which W = W0 (pre-industrial Earth).",
    },
    KeySpec {
        key: "solver.tolerance",
        label: "Newton tolerance",
        kind: Kind::Num {
            lo: 1e-13,
            hi: 1.0,
            open_lo: false,
        },
        default: "1e-10",
        unit: "W m-2",
        doc: "Newton stops when max |F| is below this.",
    },
    KeySpec {
        key: "solver.max_iterations",
        label: "Newton iteration limit",
        kind: Kind::Int { lo: 1, hi: 100000 },
        default: "200",
        unit: "",
        doc: "Newton iteration limit.",
    },
    KeySpec {
        key: "solver.warm_start",
        label: "Warm-start temperature",
        kind: num(-100.0, 200.0),
        default: "30.0",
        unit: "C",
        doc: "Uniform temperature of the warm (ice-free) start.",
    },
    KeySpec {
        key: "solver.cold_start",
        label: "Cold-start temperature",
        kind: num(-200.0, 100.0),
        default: "-60.0",
        unit: "C",
        doc: "Uniform temperature of the cold (snowball) start.",
    },
];

/// Seawater density times specific heat, J m-3 K-1 (1025 kg m-3 x 3985
/// J kg-1 K-1; common practice, no source), per seconds in a year.
pub const OCEAN_HEAT_PER_METRE: f64 = 1025.0 * 3985.0 / (365.25 * 86400.0);

/// The schema entry of `key`.
pub fn spec(key: &str) -> Option<&'static KeySpec> {
    SCHEMA.iter().find(|k| k.key == key)
}

/// The axis label of a key: its human label with the unit in parentheses,
/// e.g. "Stellar flux S0 (W m-2)", "CO2 (ppm)", "Eccentricity" (no unit).
/// A key outside the schema is returned as given (there is nothing better
/// to show; figures only receive validated keys).
pub fn axis_label(key: &str) -> String {
    match spec(key) {
        Some(s) if s.unit.is_empty() => s.label.to_string(),
        Some(s) => format!("{} ({})", s.label, s.unit),
        None => key.to_string(),
    }
}

/// The allowed values of a key as text ("0 to 90 deg").
pub fn allowed_text(kind: Kind, unit: &str) -> String {
    let u = if unit.is_empty() {
        String::new()
    } else {
        format!(" {unit}")
    };
    match kind {
        Kind::Num {
            lo,
            hi,
            open_lo: true,
        } => format!("> {lo} and <= {hi}{u}"),
        Kind::Num { lo, hi, .. } => format!("{lo} to {hi}{u}"),
        Kind::Int { lo, hi } => format!("integer {lo} to {hi}"),
        Kind::Bool => "true or false".into(),
        Kind::Choice(c) => c
            .iter()
            .map(|w| format!("\"{w}\""))
            .collect::<Vec<_>>()
            .join(" or "),
        Kind::Text { max } => format!("text, at most {max} characters"),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn axis_labels_carry_label_and_unit() {
        // Expected texts are the labels and units stated in the brief for
        // this schema (common practice, no source).
        assert_eq!(axis_label("orbit.flux"), "Stellar flux S0 (W m-2)");
        assert_eq!(axis_label("radiation.co2_ppm"), "CO2 (ppm)");
        assert_eq!(axis_label("orbit.obliquity"), "Obliquity (deg)");
        assert_eq!(
            axis_label("transport.diffusivity"),
            "Diffusivity D (W m-2 K-1)"
        );
        assert_eq!(axis_label("orbit.eccentricity"), "Eccentricity");
        assert_eq!(axis_label("no.such_key"), "no.such_key");
    }

    #[test]
    fn every_key_has_a_human_label() {
        for s in SCHEMA {
            let first = s.label.chars().next();
            assert!(
                first.is_some_and(|c| c.is_uppercase()),
                "label of {} must start with a capital letter",
                s.key
            );
            assert!(
                !s.label.contains('.'),
                "label of {} looks like a key",
                s.key
            );
            assert!(
                !s.label.contains('_'),
                "label of {} has an underscore",
                s.key
            );
            assert!(!s.label.contains('('), "label of {} holds a unit", s.key);
        }
    }
}
