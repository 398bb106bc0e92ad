//! Scenario files (TOML): schema, defaults, `--set` overrides, validation.
//!
//! The schema below is the single source of truth: every key with its type,
//! default, unit, allowed range and meaning. It drives parsing, the
//! unknown-key suggestions, `icefold check` and the key table in the README.

pub use super::schema::{KeySpec, Kind, OCEAN_HEAT_PER_METRE, SCHEMA};
use super::schema::{allowed_text, spec};
use crate::model::habitability::HabitableRange;
use crate::model::seasonal::{SeasonalError, SeasonalModel};
use crate::model::{Model, Planet, Transport};
use crate::numerics::grid::{Grid, Spacing};
use crate::physics::albedo::{Albedo, AlbedoKind};
use crate::physics::insolation::InsolationLaw;
use crate::physics::orbit::Orbit;
use crate::physics::radiation::OlrLaw;
use std::collections::BTreeMap;
use std::fmt::Write as _;
use std::path::Path;

/// The scenario every command uses when none is given (embedded in the binary).
pub const DEFAULT_SCENARIO: &str = include_str!("../../scenarios/orbital.toml");
/// Name shown for the embedded default scenario.
pub const DEFAULT_NAME: &str = "scenarios/orbital.toml (built in)";

/// What went wrong with a scenario.
#[derive(Debug, thiserror::Error)]
pub enum ScenarioError {
    /// The file could not be read.
    #[error("cannot read scenario {path}: {reason}")]
    Read {
        /// Path given.
        path: String,
        /// OS error text.
        reason: String,
    },
    /// TOML syntax error.
    #[error("{path}:{line}:{column}: TOML syntax error: {message}")]
    Syntax {
        /// Path given.
        path: String,
        /// 1-based line.
        line: usize,
        /// 1-based column.
        column: usize,
        /// Parser message.
        message: String,
    },
    /// A key not in the schema.
    #[error("unknown key `{key}`{suggestion}")]
    UnknownKey {
        /// Full key.
        key: String,
        /// ", did you mean ...?" or empty.
        suggestion: String,
    },
    /// Wrong type.
    #[error("`{key}` = {value} has the wrong type: expected {expected}")]
    WrongType {
        /// Full key.
        key: String,
        /// Value as written.
        value: String,
        /// Expected type.
        expected: String,
    },
    /// Out of range.
    #[error("`{key}` = {value} is out of range: allowed {allowed}")]
    OutOfRange {
        /// Full key.
        key: String,
        /// Value as given.
        value: String,
        /// Allowed range with unit.
        allowed: String,
    },
    /// A malformed `--set`.
    #[error("--set `{0}`: expected section.key=value, e.g. --set orbit.flux=1300")]
    BadOverride(String),
}

/// A validated scenario: every key resolved to a value.
#[derive(Clone, Debug)]
pub struct Scenario {
    /// Where it came from.
    pub source: String,
    values: BTreeMap<&'static str, toml::Value>,
}

/// Levenshtein distance, for suggestions.
fn edit_distance(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.chars().enumerate() {
        let mut cur = vec![i + 1];
        for (j, cb) in b.iter().enumerate() {
            let sub = prev[j] + usize::from(ca != *cb);
            cur.push(sub.min(prev[j + 1] + 1).min(cur[j] + 1));
        }
        prev = cur;
    }
    prev[b.len()]
}

fn suggest(key: &str) -> String {
    let last = key.rsplit('.').next().unwrap_or(key);
    // a near miss only: at most one edit per four characters of the whole
    // key, or of its last part (the right key in the wrong section)
    let best = SCHEMA
        .iter()
        .filter_map(|k| {
            let kl = k.key.rsplit('.').next().unwrap_or(k.key);
            let (full, part) = (edit_distance(key, k.key), edit_distance(last, kl));
            let near = full * 4 <= k.key.len().max(4) || part * 4 <= kl.len().max(4);
            near.then_some((full.min(part + 1), k.key))
        })
        .min();
    match best {
        Some((_, k)) => format!(", did you mean `{k}`?"),
        _ => " (see `icefold check` for the documented keys)".to_string(),
    }
}

fn line_col(text: &str, offset: usize) -> (usize, usize) {
    let before = &text[..offset.min(text.len())];
    let line = before.matches('\n').count() + 1;
    let col = before.rsplit('\n').next().map_or(0, |l| l.chars().count()) + 1;
    (line, col)
}

fn value_text(v: &toml::Value) -> String {
    match v {
        toml::Value::String(s) => format!("{s:?}"),
        other => other.to_string(),
    }
}

/// A number for a message: at most 6 significant digits (exponent form
/// outside 1e-4..1e6).
pub fn fmt_num(x: f64) -> String {
    if !x.is_finite() || x == 0.0 {
        return format!("{x}");
    }
    let r: f64 = format!("{x:.5e}").parse().unwrap_or(x);
    if (1e-4..1e6).contains(&r.abs()) {
        format!("{r}")
    } else {
        format!("{r:e}")
    }
}

fn parse_override(text: &str) -> Result<(String, toml::Value), ScenarioError> {
    let (k, v) = text
        .split_once('=')
        .ok_or_else(|| ScenarioError::BadOverride(text.to_string()))?;
    let (k, v) = (k.trim(), v.trim());
    if k.is_empty() || v.is_empty() {
        return Err(ScenarioError::BadOverride(text.to_string()));
    }
    let value = match toml::from_str::<toml::Table>(&format!("v = {v}")) {
        Ok(mut t) => t.remove("v").unwrap_or(toml::Value::String(v.to_string())),
        Err(_) => toml::Value::String(v.to_string()),
    };
    Ok((k.to_string(), value))
}

impl Scenario {
    /// Loads a scenario from a file path, or the built-in default for `None`,
    /// then applies `--set` overrides (`section.key=value`) and validates.
    pub fn load(path: Option<&Path>, overrides: &[String]) -> Result<Scenario, ScenarioError> {
        match path {
            None => Scenario::parse(DEFAULT_SCENARIO, DEFAULT_NAME, overrides),
            Some(p) => {
                let text = super::input::read_text(p, super::input::SCENARIO_MAX_BYTES).map_err(
                    |reason| ScenarioError::Read {
                        path: p.display().to_string(),
                        reason,
                    },
                )?;
                Scenario::parse(&text, &p.display().to_string(), overrides)
            }
        }
    }

    /// Parses scenario text (`source` names it in messages).
    pub fn parse(
        text: &str,
        source: &str,
        overrides: &[String],
    ) -> Result<Scenario, ScenarioError> {
        let table: toml::Table = toml::from_str(text).map_err(|e| {
            let (line, column) = e.span().map_or((1, 1), |s| line_col(text, s.start));
            ScenarioError::Syntax {
                path: source.to_string(),
                line,
                column,
                message: e.message().trim().replace('\n', " "),
            }
        })?;
        let mut given: BTreeMap<String, toml::Value> = BTreeMap::new();
        for (k, v) in table {
            match v {
                toml::Value::Table(sec) => {
                    for (k2, v2) in sec {
                        given.insert(format!("{k}.{k2}"), v2);
                    }
                }
                other => {
                    given.insert(k, other);
                }
            }
        }
        for o in overrides {
            let (k, v) = parse_override(o)?;
            given.insert(k, v);
        }
        let mut values = BTreeMap::new();
        for (k, v) in &given {
            let Some(s) = spec(k) else {
                return Err(ScenarioError::UnknownKey {
                    key: k.clone(),
                    suggestion: suggest(k),
                });
            };
            values.insert(s.key, check_value(s, v)?);
        }
        for s in SCHEMA {
            values.entry(s.key).or_insert_with(|| {
                toml::from_str::<toml::Table>(&format!("v = {}", s.default))
                    .ok()
                    .and_then(|mut t| t.remove("v"))
                    .unwrap_or(toml::Value::Boolean(false))
            });
        }
        let sc = Scenario {
            source: source.to_string(),
            values,
        };
        sc.cross_check()?;
        Ok(sc)
    }

    /// Checks that need more than one key.
    fn cross_check(&self) -> Result<(), ScenarioError> {
        // Open-surface albedo must stay in [0, 1] for P2(x) in [-1/2, 1].
        let (a0, a2) = (self.num("albedo.open"), self.num("albedo.open_p2"));
        for p in [-0.5, 1.0] {
            let a = a0 + a2 * p;
            if !(0.0..=1.0).contains(&a) {
                return Err(ScenarioError::OutOfRange {
                    key: "albedo.open_p2".into(),
                    value: fmt_num(a2),
                    allowed: format!(
                        "a value keeping albedo.open + open_p2 * P2(x) in [0, 1] (it reaches {a:.4})"
                    ),
                });
            }
        }
        let p2 = self.num("insolation.p2");
        if self.text("insolation.kind") == "legendre" && !(-1.0..=2.0).contains(&p2) {
            return Err(ScenarioError::OutOfRange {
                key: "insolation.p2".into(),
                value: fmt_num(p2),
                allowed: "-1 to 2 (insolation must stay non-negative)".into(),
            });
        }
        if self.text("insolation.kind") == "idealised" {
            // the annual mean S0 - S2 x² of the idealised law must stay
            // non-negative on 0 <= x <= 1, with S0 = flux/4 + S2/3
            let (q, s2) = (self.num("orbit.flux") / 4.0, self.num("insolation.s2"));
            if !(s2 >= -3.0 * q && s2 <= 1.5 * q) {
                return Err(ScenarioError::OutOfRange {
                    key: "insolation.s2".into(),
                    value: fmt_num(s2),
                    allowed: format!(
                        "{} to {} W m-2 for orbit.flux = {} (the annual mean S0 - S2 x², S0 = flux/4 + S2/3, must stay non-negative)",
                        fmt_num(-3.0 * q),
                        fmt_num(1.5 * q),
                        fmt_num(4.0 * q)
                    ),
                });
            }
        }
        if self.flag("seasons.enabled") && self.flag("grid.symmetric") {
            return Err(ScenarioError::OutOfRange {
                key: "grid.symmetric".into(),
                value: "true".into(),
                allowed: "false when seasons.enabled = true (the hemispheres differ over the year)"
                    .into(),
            });
        }
        let (lo, hi) = (
            self.num("habitability.min_c"),
            self.num("habitability.max_c"),
        );
        if lo >= hi {
            return Err(ScenarioError::OutOfRange {
                key: "habitability.min_c".into(),
                value: fmt_num(lo),
                allowed: format!("a temperature below habitability.max_c = {} C", fmt_num(hi)),
            });
        }
        if self.int("grid.bands") < 4 {
            return Err(ScenarioError::OutOfRange {
                key: "grid.bands".into(),
                value: self.int("grid.bands").to_string(),
                allowed: "4 to 20000".into(),
            });
        }
        Ok(())
    }

    /// A float key (integers are accepted as floats).
    pub fn num(&self, key: &str) -> f64 {
        match self.values.get(key) {
            Some(toml::Value::Float(x)) => *x,
            Some(toml::Value::Integer(i)) => *i as f64,
            _ => f64::NAN,
        }
    }

    /// An integer key.
    pub fn int(&self, key: &str) -> i64 {
        match self.values.get(key) {
            Some(toml::Value::Integer(i)) => *i,
            _ => 0,
        }
    }

    /// A boolean key.
    pub fn flag(&self, key: &str) -> bool {
        matches!(self.values.get(key), Some(toml::Value::Boolean(true)))
    }

    /// A text key.
    pub fn text(&self, key: &str) -> &str {
        match self.values.get(key) {
            Some(toml::Value::String(s)) => s,
            _ => "",
        }
    }

    /// Scenario name.
    pub fn name(&self) -> &str {
        self.text("name")
    }

    /// The fully resolved scenario as TOML, with units and defaults as comments.
    pub fn to_toml(&self) -> String {
        let mut out = String::new();
        let mut section = "";
        for s in SCHEMA {
            let (sec, name) = s.key.split_once('.').unwrap_or(("", s.key));
            if sec != section {
                let _ = writeln!(out, "\n[{sec}]");
                section = sec;
            }
            let v = value_text(&self.values[s.key]);
            let unit = if s.unit.is_empty() {
                String::new()
            } else {
                format!(" [{}]", s.unit)
            };
            let _ = writeln!(out, "{name} = {v}  # {}{unit}", s.doc);
        }
        out.trim_start().to_string()
    }

    /// The resolved scenario as a JSON object (for provenance in outputs).
    pub fn to_json(&self) -> serde_json::Value {
        let mut m = serde_json::Map::new();
        for s in SCHEMA {
            let v = match &self.values[s.key] {
                toml::Value::String(x) => serde_json::Value::from(x.clone()),
                toml::Value::Integer(i) => serde_json::Value::from(*i),
                toml::Value::Float(f) => serde_json::Value::from(*f),
                toml::Value::Boolean(b) => serde_json::Value::from(*b),
                other => serde_json::Value::from(other.to_string()),
            };
            m.insert(s.key.to_string(), v);
        }
        serde_json::Value::Object(m)
    }

    /// The grid.
    pub fn grid(&self) -> Grid {
        let spacing = if self.text("grid.spacing") == "latitude" {
            Spacing::Latitude
        } else {
            Spacing::Sine
        };
        Grid::new(
            self.int("grid.bands") as usize,
            spacing,
            self.flag("grid.symmetric"),
        )
    }

    /// The weathering law of `[weathering]`
    /// ([`crate::physics::weathering`]); the outgassing is
    /// `num("weathering.outgassing")`.
    pub fn weathering(&self) -> crate::physics::weathering::Weathering {
        crate::physics::weathering::Weathering {
            present_rate: self.num("weathering.present_rate"),
            co2_exponent: self.num("weathering.co2_exponent"),
            efold_k: self.num("weathering.efold_temperature"),
            reference_c: self.num("weathering.reference_temperature"),
            reference_ppm: self.num("weathering.reference_co2_ppm"),
        }
    }

    /// The planet's physics.
    pub fn planet(&self) -> Planet {
        let orbit = Orbit {
            flux: self.num("orbit.flux"),
            obliquity: self.num("orbit.obliquity").to_radians(),
            eccentricity: self.num("orbit.eccentricity"),
            perihelion: self.num("orbit.perihelion").to_radians(),
        };
        let insolation = match self.text("insolation.kind") {
            "legendre" => InsolationLaw::Legendre {
                p2: self.num("insolation.p2"),
            },
            "idealised" => {
                let q = orbit.flux / 4.0;
                InsolationLaw::Idealised {
                    s1: self.num("insolation.s1") / q,
                    s2: self.num("insolation.s2") / q,
                }
            }
            _ => InsolationLaw::Orbital,
        };
        let albedo = Albedo {
            kind: if self.text("albedo.kind") == "smooth" {
                AlbedoKind::Smooth {
                    width: self.num("albedo.width"),
                }
            } else {
                AlbedoKind::Step
            },
            open: self.num("albedo.open"),
            open_p2: self.num("albedo.open_p2"),
            ice: self.num("albedo.ice"),
            threshold: self.num("albedo.threshold"),
        };
        let olr = if self.text("radiation.kind") == "greybody" {
            OlrLaw::Greybody {
                emissivity: self.num("radiation.emissivity"),
            }
        } else {
            OlrLaw::Linear {
                a: self.num("radiation.a"),
                b: self.num("radiation.b"),
            }
        };
        let transport = match self.text("transport.kind") {
            "relaxation" => Transport::Relaxation {
                rate: self.num("transport.relaxation"),
            },
            "moist" => Transport::Moist {
                diffusivity: self.num("transport.diffusivity"),
                air: crate::physics::humidity::MoistAir {
                    relative_humidity: self.num("transport.relative_humidity"),
                    pressure_hpa: self.num("transport.surface_pressure"),
                },
            },
            _ => Transport::Diffusive {
                diffusivity: self.num("transport.diffusivity"),
            },
        };
        let f_land = self.num("seasons.land_fraction");
        let c = f_land * self.num("seasons.land_heat_capacity")
            + (1.0 - f_land) * OCEAN_HEAT_PER_METRE * self.num("seasons.mixed_layer_depth");
        Planet {
            orbit,
            insolation,
            albedo,
            olr,
            co2_ppm: self.num("radiation.co2_ppm"),
            co2_ref_ppm: self.num("radiation.co2_ref_ppm"),
            forcing_wm2: self.num("radiation.forcing"),
            transport,
            heat_capacity: vec![c],
            habitable: HabitableRange {
                min_c: self.num("habitability.min_c"),
                max_c: self.num("habitability.max_c"),
            },
        }
    }

    /// The model on its grid.
    pub fn model(&self) -> Model {
        Model::new(self.grid(), self.planet())
    }

    /// The seasonal model of the scenario (`seasons.steps_per_year` steps a
    /// year); the schema has already checked depth, land fraction and steps.
    pub fn seasonal_model(&self) -> Result<SeasonalModel, SeasonalError> {
        let steps = self.int("seasons.steps_per_year");
        if steps < 2 {
            return Err(SeasonalError::Invalid(format!(
                "`seasons.steps_per_year` = {steps}: need at least 2"
            )));
        }
        if self.flag("seaice.enabled") {
            if self.num("seasons.land_fraction") > 0.0 {
                return Err(SeasonalError::Invalid(format!(
                    "`seasons.land_fraction` = {}: the sea-ice model is an aquaplanet (need 0)",
                    fmt_num(self.num("seasons.land_fraction"))
                )));
            }
            let ice = crate::model::seaice::SeaIce {
                conductivity: self.num("seaice.conductivity"),
                latent_heat: self.num("seaice.latent_heat"),
                ocean_heat_flux: self.num("seaice.ocean_heat_flux"),
                freezing_point: self.num("seaice.freezing_point"),
                thermodynamics: self.flag("seaice.thermodynamics"),
            };
            return SeasonalModel::with_sea_ice(self.model(), steps as usize, ice);
        }
        SeasonalModel::new(self.model(), steps as usize)
    }

    /// Markdown table of every key (for the README).
    pub fn schema_markdown() -> String {
        let mut out = String::from(
            "| key | label | default | unit | allowed | meaning |\n|---|---|---|---|---|---|\n",
        );
        for s in SCHEMA {
            let _ = writeln!(
                out,
                "| `{}` | {} | `{}` | {} | {} | {} |",
                s.key,
                s.label,
                s.default,
                s.unit,
                allowed_text(s.kind, s.unit).replace('|', "/"),
                s.doc
            );
        }
        out
    }
}

fn check_value(s: &KeySpec, v: &toml::Value) -> Result<toml::Value, ScenarioError> {
    let wrong = |expected: &str| ScenarioError::WrongType {
        key: s.key.to_string(),
        value: value_text(v),
        expected: expected.to_string(),
    };
    let out_of_range = |value: String| ScenarioError::OutOfRange {
        key: s.key.to_string(),
        value,
        allowed: allowed_text(s.kind, s.unit),
    };
    match s.kind {
        Kind::Num { lo, hi, open_lo } => {
            let x = match v {
                toml::Value::Float(x) => *x,
                toml::Value::Integer(i) => *i as f64,
                _ => return Err(wrong("a number")),
            };
            let ok = x.is_finite() && x <= hi && (if open_lo { x > lo } else { x >= lo });
            if !ok {
                return Err(out_of_range(fmt_num(x)));
            }
            Ok(toml::Value::Float(x))
        }
        Kind::Int { lo, hi } => {
            let i = match v {
                toml::Value::Integer(i) => *i,
                toml::Value::Float(x) if x.fract() == 0.0 && x.abs() < 1e15 => *x as i64,
                _ => return Err(wrong("an integer")),
            };
            if i < lo || i > hi {
                return Err(out_of_range(i.to_string()));
            }
            Ok(toml::Value::Integer(i))
        }
        Kind::Bool => match v {
            toml::Value::Boolean(_) => Ok(v.clone()),
            _ => Err(wrong("true or false")),
        },
        Kind::Choice(c) => match v {
            toml::Value::String(x) if c.contains(&x.as_str()) => Ok(v.clone()),
            _ => Err(out_of_range(value_text(v))),
        },
        Kind::Text { max } => match v {
            toml::Value::String(x) => {
                let n = x.chars().count();
                let shown = || {
                    let head: String = x.chars().take(20).collect();
                    format!("\"{}…\" ({n} characters)", head.escape_debug())
                };
                if n > max {
                    Err(out_of_range(shown()))
                } else if x.chars().any(|c| c.is_control() && c != '\n' && c != '\t') {
                    Err(ScenarioError::OutOfRange {
                        key: s.key.to_string(),
                        value: format!(
                            "\"{}\"",
                            x.chars().take(20).collect::<String>().escape_debug()
                        ),
                        allowed: "text without control characters (line breaks and tabs allowed)"
                            .into(),
                    })
                } else {
                    Ok(v.clone())
                }
            }
            _ => Err(wrong("text in quotes")),
        },
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn defaults_and_overrides() {
        let s = Scenario::parse(
            "name = \"x\"\n[orbit]\nflux = 1300\n",
            "t",
            &["orbit.obliquity=40".into()],
        )
        .unwrap();
        assert_eq!(s.num("orbit.flux"), 1300.0);
        assert_eq!(s.num("orbit.obliquity"), 40.0);
        assert_eq!(s.int("grid.bands"), 90);
    }

    #[test]
    fn errors_name_the_field() {
        let e = Scenario::parse("[orbit]\nflux = -3\n", "t", &[])
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("orbit.flux") && e.contains("-3") && e.contains("> 0"),
            "{e}"
        );
        let e = Scenario::parse("[orbit]\nobliqity = 3\n", "t", &[])
            .unwrap_err()
            .to_string();
        assert!(e.contains("did you mean `orbit.obliquity`"), "{e}");
        let e = Scenario::parse("[orbit]\nflux = = 3\n", "f.toml", &[])
            .unwrap_err()
            .to_string();
        assert!(e.starts_with("f.toml:2:"), "{e}");
        let e = Scenario::parse("", "t", &["grid.bands=3".into()])
            .unwrap_err()
            .to_string();
        assert!(e.contains("grid.bands") && e.contains("4 to"), "{e}");
        // the joint constraint names both fields on one line (our rule)
        let e = Scenario::parse(
            "",
            "t",
            &[
                "habitability.min_c=50".into(),
                "habitability.max_c=20".into(),
            ],
        )
        .unwrap_err()
        .to_string();
        assert!(
            e.contains("habitability.min_c")
                && e.contains("habitability.max_c")
                && e.contains("50")
                && e.contains("20")
                && !e.contains('\n'),
            "{e}"
        );
        let e = Scenario::parse("", "t", &["orbit.flux=nan".into()])
            .unwrap_err()
            .to_string();
        assert!(e.contains("orbit.flux"), "{e}");
    }

    #[test]
    fn resolved_toml_parses_back_identically() {
        let s = Scenario::parse(DEFAULT_SCENARIO, "d", &[]).unwrap();
        let back = Scenario::parse(&s.to_toml(), "r", &[]).unwrap();
        assert_eq!(s.to_json(), back.to_json());
    }
}
