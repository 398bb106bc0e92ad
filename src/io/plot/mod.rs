//! Figure rendering: every figure is drawn twice, to SVG text and to a PNG
//! image, both returned as bytes (the caller stages them for writing).
//!
//! Design rules, so that figures read in greyscale print and for
//! colour-blind readers:
//! * every climate state keeps one colour and marker shape in every figure
//!   (yellow ice-free, blue polar caps, red equatorial belt, black
//!   snowball; Tol's medium-contrast hues); stable states are drawn solid
//!   with filled markers, unstable ones dashed with open markers;
//! * every map regime keeps one fill and hatch in every map, whichever
//!   regimes are present; fills differ in luminance and the hatch shows
//!   coexisting states;
//! * filled fields use a sequential colour map whose lightness rises
//!   monotonically ([`sequential_colour`]);
//! * overlay lines are black with a white halo, visible on any fill;
//! * axes of scenario parameters are labelled from the schema
//!   ([`crate::io::schema::axis_label`]), with a log scale for CO2 and for
//!   positive ranges wider than a factor of 20; units are written as in the
//!   schema everywhere ("W m-2", "W m-2 K-1", "deg", "C", "ppm");
//! * legends sit in a column beside the plots, as wide as their entries
//!   need; long titles and entries are wrapped.
//!
//! Text uses the embedded DejaVu Sans font (no system fonts are needed).
//! Inputs are checked first: empty or inconsistent inputs give
//! [`ExportError::Empty`] / [`ExportError::Shape`], and any NaN or infinity
//! gives [`ExportError::NonFinite`] naming the quantity. Nothing is skipped
//! silently, with one documented exception: empty overlay / boundary
//! polylines are ignored (they stand for "no such line").

mod axis;
mod chart;
mod check;
mod colour;
mod field;
mod hierarchy;
mod hysteresis;
mod legend;
mod placement;
mod profile;
mod regime;
mod render;
mod style;
mod thermostat;

#[cfg(doc)]
use crate::io::export::ExportError;

pub use colour::sequential_colour;
pub use field::field_figure;
pub use hierarchy::{ModelBoundaries, ModelCurves, hierarchy_figure, hierarchy_map_figure};
pub use hysteresis::hysteresis_figure;
pub use profile::profile_figure;
pub use regime::regime_figure;
pub use thermostat::{ThermostatPlot, thermostat_figure};

/// Width of every figure, in pixels.
pub const FIGURE_WIDTH: u32 = 1000;
/// Height of every figure, in pixels.
pub const FIGURE_HEIGHT: u32 = 700;

/// Axis and colour-bar titles of quantities that are not scenario keys, in
/// the unit style of the schema.
pub mod labels {
    /// Latitude axis.
    pub const LATITUDE: &str = "Latitude (deg)";
    /// Day axis of seasonal fields.
    pub const DAY_OF_YEAR: &str = "Day of year (0 = northern spring equinox)";
    /// Surface temperature.
    pub const TEMPERATURE: &str = "Temperature (C)";
    /// Daily-mean insolation.
    pub const INSOLATION: &str = "Daily-mean insolation (W m-2)";
    /// Most poleward ice edge.
    pub const ICE_EDGE: &str = "Ice-edge latitude (deg)";
    /// Area-weighted global mean temperature.
    pub const GLOBAL_MEAN: &str = "Global-mean temperature (C)";
    /// Surface albedo.
    pub const ALBEDO: &str = "Albedo";
}

/// A rendered figure: the same drawing as SVG text and as PNG image bytes,
/// each empty when its format was not asked for ([`Formats`]).
#[derive(Debug, Clone)]
pub struct Figure {
    /// UTF-8 SVG document.
    pub svg: Vec<u8>,
    /// PNG file bytes (8-bit RGB).
    pub png: Vec<u8>,
}

impl Figure {
    /// Stages `STEM.svg` and/or `STEM.png` in `dir` (what was rendered).
    pub fn add_to(self, out: &mut crate::io::export::OutputSet, dir: &std::path::Path, stem: &str) {
        if !self.svg.is_empty() {
            out.add(dir.join(format!("{stem}.svg")), self.svg);
        }
        if !self.png.is_empty() {
            out.add(dir.join(format!("{stem}.png")), self.png);
        }
    }
}

/// Which figure files a command renders (`--figures`): the same drawing as
/// SVG, as PNG, both, or none (tables and summaries only).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Formats {
    /// No figures.
    None,
    /// SVG only.
    Svg,
    /// PNG only.
    Png,
    /// SVG and PNG (the default).
    #[default]
    All,
}

impl Formats {
    /// The names `--figures` accepts, in order.
    pub const NAMES: [&'static str; 4] = ["none", "svg", "png", "all"];

    /// From a `--figures` name.
    pub fn from_name(name: &str) -> Option<Formats> {
        match name {
            "none" => Some(Formats::None),
            "svg" => Some(Formats::Svg),
            "png" => Some(Formats::Png),
            "all" => Some(Formats::All),
            _ => None,
        }
    }

    /// Whether any figure is rendered.
    pub fn any(self) -> bool {
        self != Formats::None
    }

    /// Whether SVG is rendered.
    pub fn svg(self) -> bool {
        matches!(self, Formats::Svg | Formats::All)
    }

    /// Whether PNG is rendered.
    pub fn png(self) -> bool {
        matches!(self, Formats::Png | Formats::All)
    }
}

/// One latitude profile of an equilibrium state, for [`profile_figure`].
#[derive(Debug, Clone, Default)]
pub struct ProfileCurve {
    /// Short name of the curve in the legend (e.g. its number, "1").
    pub label: String,
    /// State label ([`crate::model::climate::State::label`], e.g.
    /// "polar-caps"): selects colour and marker, and names the curve.
    pub state: String,
    /// Band latitudes in degrees (−90…90); any order.
    pub latitude_deg: Vec<f64>,
    /// Surface temperature in C at each latitude.
    pub temperature_c: Vec<f64>,
    /// Albedo (fraction 0…1) at each latitude.
    pub albedo: Vec<f64>,
    /// Latitudes of ice edges (may be empty).
    pub ice_edges_deg: Vec<f64>,
    /// Whether the state is stable (solid) or unstable (dashed).
    pub stable: bool,
}

/// One continuation branch for [`hysteresis_figure`]; all vectors have equal length.
#[derive(Debug, Clone, Default)]
pub struct BranchCurve {
    /// Branch number (used in error messages).
    pub id: usize,
    /// Control-parameter value at each point, in continuation order.
    pub param: Vec<f64>,
    /// Ice-edge latitude in degrees at each point.
    pub ice_edge_deg: Vec<f64>,
    /// Global-mean temperature in C at each point.
    pub global_mean_c: Vec<f64>,
    /// Stability of each point.
    pub stable: Vec<bool>,
    /// State label of each point ([`crate::model::climate::State::label`]):
    /// curves are coloured and named by state and stability.
    pub state: Vec<String>,
}

/// A fold (saddle-node) point, with the optional state the climate jumps to.
#[derive(Debug, Clone, Default)]
pub struct FoldMark {
    /// Control-parameter value at the fold.
    pub param: f64,
    /// Ice-edge latitude at the fold, degrees.
    pub ice_edge_deg: f64,
    /// Global-mean temperature at the fold, C.
    pub global_mean_c: f64,
    /// Ice-edge latitude of the state reached after the jump, if known.
    pub jump_to_ice_edge_deg: Option<f64>,
    /// Global-mean temperature of the state reached after the jump, if known.
    pub jump_to_global_mean_c: Option<f64>,
}

/// How a boundary curve of a map was obtained.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum BoundaryMethod {
    /// Folds of neighbouring slices joined (`slices` in `boundaries.csv`):
    /// drawn solid.
    #[default]
    Slices,
    /// A fold continued in both parameters (`fold-continuation`): drawn
    /// dotted.
    FoldContinuation,
}

impl BoundaryMethod {
    /// The method of a `boundaries.csv` method name; `None` if unknown.
    pub fn from_name(name: &str) -> Option<BoundaryMethod> {
        match name {
            "slices" => Some(BoundaryMethod::Slices),
            "fold-continuation" => Some(BoundaryMethod::FoldContinuation),
            _ => None,
        }
    }
}

/// A boundary curve of a regime map.
#[derive(Debug, Clone, Default)]
pub struct BoundaryLine {
    /// Transition, as in `boundaries.csv` ("polar-caps -> snowball").
    pub transition: String,
    /// How it was obtained.
    pub method: BoundaryMethod,
    /// Points (across value, traced value).
    pub points: Vec<(f64, f64)>,
}

/// The input of [`regime_figure`]: which stable climates exist on a grid
/// of two scenario parameters.
#[derive(Debug, Clone, Default)]
pub struct RegimeMap {
    /// Scenario key of the across (horizontal) parameter.
    pub across_key: String,
    /// Scenario key of the traced (vertical) parameter.
    pub vary_key: String,
    /// Across values (grid points, strictly monotone, at least two).
    pub across: Vec<f64>,
    /// Traced values (cell centres, strictly monotone, at least two).
    pub vary: Vec<f64>,
    /// Per cell `j * across.len() + i`: mask of the stable states present
    /// (bits of [`crate::analysis::sweep::state_bit`]).
    pub regime: Vec<u32>,
    /// Boundary curves drawn over the map (empty ones are ignored).
    pub boundaries: Vec<BoundaryLine>,
}
