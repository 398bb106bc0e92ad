//! Scenario files (TOML): schema, defaults, `--set` overrides, validation.
//!
//! The schema below is the single source of truth: every key with its type,
//! default, unit, allowed range and meaning. It drives parsing, the
//! unknown-key suggestions, `icefold check` and the key table in the README.

use crate::albedo::{Albedo, AlbedoKind};
use crate::grid::{Grid, Spacing};
use crate::insolation::InsolationLaw;
use crate::model::{Model, Planet, Transport};
use crate::orbit::Orbit;
use crate::radiation::OlrLaw;
use std::collections::BTreeMap;
use std::fmt::Write as _;
use std::path::Path;

/// The scenario every command uses when none is given (embedded in the binary).
pub const DEFAULT_SCENARIO: &str = include_str!("../scenarios/orbital.toml");
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
    /// Free text.
    Text,
}

/// One documented scenario key.
#[derive(Clone, Copy, Debug)]
pub struct KeySpec {
    /// `section.name`, or `name` at top level.
    pub key: &'static str,
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
        kind: Kind::Text,
        default: "\"unnamed\"",
        unit: "",
        doc: "Short name of the scenario.",
    },
    KeySpec {
        key: "description",
        kind: Kind::Text,
        default: "\"\"",
        unit: "",
        doc: "Free text.",
    },
    KeySpec {
        key: "grid.bands",
        kind: Kind::Int { lo: 4, hi: 20000 },
        default: "90",
        unit: "",
        doc: "Number of latitude bands (pole to pole, or equator to pole if symmetric).",
    },
    KeySpec {
        key: "grid.spacing",
        kind: Kind::Choice(&["sine", "latitude"]),
        default: "\"sine\"",
        unit: "",
        doc: "Equal steps in sin(latitude) (equal areas) or in latitude.",
    },
    KeySpec {
        key: "grid.symmetric",
        kind: Kind::Bool,
        default: "false",
        unit: "",
        doc: "Model the northern hemisphere only, mirrored at the equator.",
    },
    KeySpec {
        key: "orbit.flux",
        kind: pos(1e5),
        default: "1361.0",
        unit: "W m-2",
        doc: "Stellar flux at the semi-major axis, S0.",
    },
    KeySpec {
        key: "orbit.obliquity",
        kind: num(0.0, 180.0),
        default: "23.44",
        unit: "deg",
        doc: "Obliquity (axial tilt).",
    },
    KeySpec {
        key: "orbit.eccentricity",
        kind: num(0.0, 0.9),
        default: "0.0",
        unit: "",
        doc: "Orbital eccentricity.",
    },
    KeySpec {
        key: "orbit.perihelion",
        kind: num(0.0, 360.0),
        default: "283.0",
        unit: "deg",
        doc: "Solar longitude at perihelion, from the northern spring equinox.",
    },
    KeySpec {
        key: "insolation.kind",
        kind: Kind::Choice(&["orbital", "legendre"]),
        default: "\"orbital\"",
        unit: "",
        doc: "Exact annual mean over the orbit (Berger 1978), or (S0/4)(1 + p2 P2(x)) (North 1975).",
    },
    KeySpec {
        key: "insolation.p2",
        kind: num(-1.0, 2.0),
        default: "-0.482",
        unit: "",
        doc: "P2 coefficient of the Legendre law.",
    },
    KeySpec {
        key: "radiation.kind",
        kind: Kind::Choice(&["linear", "greybody"]),
        default: "\"linear\"",
        unit: "",
        doc: "OLR = A + B T (Budyko 1969) or emissivity * sigma * T^4.",
    },
    KeySpec {
        key: "radiation.a",
        kind: num(-1e4, 1e4),
        default: "203.3",
        unit: "W m-2",
        doc: "A of the linear law (OLR at 0 C).",
    },
    KeySpec {
        key: "radiation.b",
        kind: pos(1e3),
        default: "2.09",
        unit: "W m-2 K-1",
        doc: "B of the linear law.",
    },
    KeySpec {
        key: "radiation.emissivity",
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
        kind: pos(1e6),
        default: "280.0",
        unit: "ppm",
        doc: "CO2; forcing 5.35 ln(co2/co2_ref) W m-2 is subtracted from the OLR (Myhre et al. 1998).",
    },
    KeySpec {
        key: "radiation.co2_ref_ppm",
        kind: pos(1e6),
        default: "280.0",
        unit: "ppm",
        doc: "CO2 at which the forcing is zero.",
    },
    KeySpec {
        key: "albedo.kind",
        kind: Kind::Choice(&["step", "smooth"]),
        default: "\"step\"",
        unit: "",
        doc: "Step at the threshold (sub-grid ice edge) or tanh ramp.",
    },
    KeySpec {
        key: "albedo.open",
        kind: num(0.0, 1.0),
        default: "0.319",
        unit: "",
        doc: "Open-surface albedo (at P2(x) = 0).",
    },
    KeySpec {
        key: "albedo.open_p2",
        kind: num(-1.0, 1.0),
        default: "0.202",
        unit: "",
        doc: "P2 coefficient of the open-surface albedo (North et al. 1981).",
    },
    KeySpec {
        key: "albedo.ice",
        kind: num(0.0, 1.0),
        default: "0.62",
        unit: "",
        doc: "Ice albedo.",
    },
    KeySpec {
        key: "albedo.threshold",
        kind: num(-150.0, 100.0),
        default: "-10.0",
        unit: "C",
        doc: "Temperature below which the surface is ice.",
    },
    KeySpec {
        key: "albedo.width",
        kind: pos(100.0),
        default: "2.0",
        unit: "K",
        doc: "Ramp width of the smooth law.",
    },
    KeySpec {
        key: "transport.kind",
        kind: Kind::Choice(&["diffusive", "relaxation"]),
        default: "\"diffusive\"",
        unit: "",
        doc: "D d/dx[(1-x^2) dT/dx] (North 1975) or gamma (Tbar - T) (Budyko 1969).",
    },
    KeySpec {
        key: "transport.diffusivity",
        kind: num(0.0, 1e3),
        default: "0.649",
        unit: "W m-2 K-1",
        doc: "D of diffusive transport.",
    },
    KeySpec {
        key: "transport.relaxation",
        kind: num(0.0, 1e3),
        default: "3.04",
        unit: "W m-2 K-1",
        doc: "gamma of relaxation transport.",
    },
    KeySpec {
        key: "seasons.enabled",
        kind: Kind::Bool,
        default: "false",
        unit: "",
        doc: "Trace the seasonal model (periodic climates) with `trace`; `periodic` and `run` always use it.",
    },
    KeySpec {
        key: "seasons.mixed_layer_depth",
        kind: pos(1e4),
        default: "75.0",
        unit: "m",
        doc: "Ocean mixed-layer depth; C = rho c_p h (75 m gives 9.7 W yr m-2 K-1).",
    },
    KeySpec {
        key: "seasons.land_fraction",
        kind: num(0.0, 1.0),
        default: "0.0",
        unit: "",
        doc: "Land fraction of every band.",
    },
    KeySpec {
        key: "seasons.land_heat_capacity",
        kind: pos(1e3),
        default: "0.45",
        unit: "W yr m-2 K-1",
        doc: "Heat capacity of land.",
    },
    KeySpec {
        key: "seasons.steps_per_year",
        kind: Kind::Int { lo: 12, hi: 100000 },
        default: "360",
        unit: "",
        doc: "Implicit time steps per year.",
    },
    KeySpec {
        key: "solver.tolerance",
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
        kind: Kind::Int { lo: 1, hi: 100000 },
        default: "200",
        unit: "",
        doc: "Newton iteration limit.",
    },
    KeySpec {
        key: "solver.warm_start",
        kind: num(-100.0, 200.0),
        default: "30.0",
        unit: "C",
        doc: "Uniform temperature of the warm (ice-free) start.",
    },
    KeySpec {
        key: "solver.cold_start",
        kind: num(-200.0, 100.0),
        default: "-60.0",
        unit: "C",
        doc: "Uniform temperature of the cold (snowball) start.",
    },
];

/// Seawater density times specific heat, J m-3 K-1 (1025 kg m-3 x 3985
/// J kg-1 K-1; common practice, no source), per seconds in a year.
pub const OCEAN_HEAT_PER_METRE: f64 = 1025.0 * 3985.0 / (365.25 * 86400.0);

/// A validated scenario: every key resolved to a value.
#[derive(Clone, Debug)]
pub struct Scenario {
    /// Where it came from.
    pub source: String,
    values: BTreeMap<&'static str, toml::Value>,
}

fn spec(key: &str) -> Option<&'static KeySpec> {
    SCHEMA.iter().find(|k| k.key == key)
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
    let best = SCHEMA
        .iter()
        .map(|k| {
            let kl = k.key.rsplit('.').next().unwrap_or(k.key);
            (
                edit_distance(key, k.key).min(edit_distance(last, kl) + 1),
                k.key,
            )
        })
        .min();
    match best {
        Some((d, k)) if d <= 4 => format!(", did you mean `{k}`?"),
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

fn fmt_num(x: f64) -> String {
    let s = format!("{x}");
    if s.contains('e') || s.contains('.') || s.contains("inf") || s.contains("NaN") {
        s
    } else {
        format!("{s}.0")
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
                let text = std::fs::read_to_string(p).map_err(|e| ScenarioError::Read {
                    path: p.display().to_string(),
                    reason: e.to_string(),
                })?;
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
        if self.flag("seasons.enabled") && self.flag("grid.symmetric") {
            return Err(ScenarioError::OutOfRange {
                key: "grid.symmetric".into(),
                value: "true".into(),
                allowed: "false when seasons.enabled = true (the hemispheres differ over the year)"
                    .into(),
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

    /// The planet's physics.
    pub fn planet(&self) -> Planet {
        let orbit = Orbit {
            flux: self.num("orbit.flux"),
            obliquity: self.num("orbit.obliquity").to_radians(),
            eccentricity: self.num("orbit.eccentricity"),
            perihelion: self.num("orbit.perihelion").to_radians(),
        };
        let insolation = if self.text("insolation.kind") == "legendre" {
            InsolationLaw::Legendre {
                p2: self.num("insolation.p2"),
            }
        } else {
            InsolationLaw::Orbital
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
        let transport = if self.text("transport.kind") == "relaxation" {
            Transport::Relaxation {
                rate: self.num("transport.relaxation"),
            }
        } else {
            Transport::Diffusive {
                diffusivity: self.num("transport.diffusivity"),
            }
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
            transport,
            heat_capacity: vec![c],
        }
    }

    /// The model on its grid.
    pub fn model(&self) -> Model {
        Model::new(self.grid(), self.planet())
    }

    /// Markdown table of every key (for the README).
    pub fn schema_markdown() -> String {
        let mut out =
            String::from("| key | default | unit | allowed | meaning |\n|---|---|---|---|---|\n");
        for s in SCHEMA {
            let _ = writeln!(
                out,
                "| `{}` | `{}` | {} | {} | {} |",
                s.key,
                s.default,
                s.unit,
                allowed_text(s.kind, s.unit).replace('|', "/"),
                s.doc
            );
        }
        out
    }
}

fn allowed_text(kind: Kind, unit: &str) -> String {
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
        Kind::Text => "text".into(),
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
        Kind::Text => match v {
            toml::Value::String(_) => Ok(v.clone()),
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
