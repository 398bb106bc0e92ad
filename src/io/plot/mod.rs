//! Figure rendering: every figure is drawn twice, to SVG text and to a PNG
//! image, both returned as bytes (the caller stages them for writing).
//!
//! Design rules, so that figures read in greyscale print:
//! * stable states are drawn with solid lines, unstable ones dashed;
//! * each curve or branch also carries its own marker (shape × filled/open);
//! * filled fields use a sequential colour map whose lightness rises
//!   monotonically ([`sequential_colour`]); categorical maps use fills of
//!   clearly separated lightness, and bistable cells are hatched;
//! * overlay lines are black with a white halo, visible on any fill.
//!
//! Text uses the embedded DejaVu Sans font (no system fonts are needed).
//! Inputs are checked first: empty or inconsistent inputs give
//! [`ExportError::Empty`] / [`ExportError::Shape`], and any NaN or infinity
//! gives [`ExportError::NonFinite`] naming the quantity. Nothing is skipped
//! silently, with one documented exception: empty overlay / boundary
//! polylines are ignored (they stand for "no such line").

mod chart;
mod check;
mod field;
mod hysteresis;
mod legend;
mod profile;
mod regime;
mod render;
mod style;

pub use field::field_figure;
pub use hysteresis::hysteresis_figure;
pub use profile::profile_figure;
pub use regime::regime_figure;
pub use style::sequential_colour;

/// Width of every figure, in pixels.
pub const FIGURE_WIDTH: u32 = 1000;
/// Height of every figure, in pixels.
pub const FIGURE_HEIGHT: u32 = 700;

/// A rendered figure: the same drawing as SVG text and as PNG image bytes.
#[derive(Debug, Clone)]
pub struct Figure {
    /// UTF-8 SVG document.
    pub svg: Vec<u8>,
    /// PNG file bytes (8-bit RGB).
    pub png: Vec<u8>,
}

/// One latitude profile of an equilibrium state, for [`profile_figure`].
#[derive(Debug, Clone, Default)]
pub struct ProfileCurve {
    /// Legend text.
    pub label: String,
    /// Band latitudes in degrees (−90…90); any order.
    pub latitude_deg: Vec<f64>,
    /// Surface temperature in °C at each latitude.
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
    /// Branch number (selects colour and marker, shown in the legend).
    pub id: usize,
    /// Control-parameter value at each point, in continuation order.
    pub param: Vec<f64>,
    /// Ice-edge latitude in degrees at each point.
    pub ice_edge_deg: Vec<f64>,
    /// Global-mean temperature in °C at each point.
    pub global_mean_c: Vec<f64>,
    /// Stability of each point.
    pub stable: Vec<bool>,
}

/// A fold (saddle-node) point, with the optional state the climate jumps to.
#[derive(Debug, Clone, Default)]
pub struct FoldMark {
    /// Control-parameter value at the fold.
    pub param: f64,
    /// Ice-edge latitude at the fold, degrees.
    pub ice_edge_deg: f64,
    /// Global-mean temperature at the fold, °C.
    pub global_mean_c: f64,
    /// Ice-edge latitude of the state reached after the jump, if known.
    pub jump_to_ice_edge_deg: Option<f64>,
    /// Global-mean temperature of the state reached after the jump, if known.
    pub jump_to_global_mean_c: Option<f64>,
}
