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

use std::ops::Range;
use std::sync::OnceLock;

use plotters::coord::Shift;
use plotters::coord::types::RangedCoordf64;
use plotters::element::DashedPathElement;
use plotters::prelude::*;
use plotters::style::{FontStyle, register_font};

use crate::io::export::ExportError;

/// Width of every figure, in pixels.
pub const FIGURE_WIDTH: u32 = 1000;
/// Height of every figure, in pixels.
pub const FIGURE_HEIGHT: u32 = 700;

const FONT: &str = "sans-serif";
const LEGEND_WIDTH: u32 = 230;
const ROW_H: i32 = 22;

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

// ---------------------------------------------------------------------------
// plumbing

type PRes<T = ()> = Result<T, String>;
type Chart<'a, DB> = ChartContext<'a, DB, Cartesian2d<RangedCoordf64, RangedCoordf64>>;

trait Pe<T> {
    fn pe(self) -> PRes<T>;
}
impl<T, E: std::fmt::Display> Pe<T> for Result<T, E> {
    fn pe(self) -> PRes<T> {
        self.map_err(|e| e.to_string())
    }
}

fn ensure_font() -> Result<(), ExportError> {
    static FONT_READY: OnceLock<Result<(), String>> = OnceLock::new();
    FONT_READY
        .get_or_init(|| {
            register_font(FONT, FontStyle::Normal, dejavu::sans::regular())
                .map_err(|_| "embedded DejaVu Sans font could not be loaded".to_string())?;
            register_font(FONT, FontStyle::Bold, dejavu::sans::bold())
                .map_err(|_| "embedded DejaVu Sans Bold font could not be loaded".to_string())
        })
        .clone()
        .map_err(|what| ExportError::Plot { what })
}

trait Paint {
    fn paint<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> PRes;
}

fn render<P: Paint>(p: &P) -> Result<Figure, ExportError> {
    ensure_font()?;
    let plot_err = |what: String| ExportError::Plot { what };
    let mut svg = String::new();
    {
        let root =
            SVGBackend::with_string(&mut svg, (FIGURE_WIDTH, FIGURE_HEIGHT)).into_drawing_area();
        root.fill(&WHITE).pe().map_err(plot_err)?;
        p.paint(&root).map_err(plot_err)?;
        root.present().pe().map_err(plot_err)?;
    }
    let mut rgb = vec![255u8; (FIGURE_WIDTH * FIGURE_HEIGHT * 3) as usize];
    {
        let root =
            BitMapBackend::with_buffer(&mut rgb, (FIGURE_WIDTH, FIGURE_HEIGHT)).into_drawing_area();
        root.fill(&WHITE).pe().map_err(plot_err)?;
        p.paint(&root).map_err(plot_err)?;
        root.present().pe().map_err(plot_err)?;
    }
    let png = encode_png(&rgb, FIGURE_WIDTH, FIGURE_HEIGHT)?;
    Ok(Figure {
        svg: svg.into_bytes(),
        png,
    })
}

fn encode_png(rgb: &[u8], w: u32, h: u32) -> Result<Vec<u8>, ExportError> {
    let err = |e: png::EncodingError| ExportError::Plot {
        what: format!("PNG encoding failed: {e}"),
    };
    let mut out = Vec::new();
    {
        let mut enc = png::Encoder::new(&mut out, w, h);
        enc.set_color(png::ColorType::Rgb);
        enc.set_depth(png::BitDepth::Eight);
        let mut writer = enc.write_header().map_err(err)?;
        writer.write_image_data(rgb).map_err(err)?;
        writer.finish().map_err(err)?;
    }
    Ok(out)
}

fn font(size: f64) -> TextStyle<'static> {
    TextStyle::from((FONT, size).into_font()).color(&BLACK)
}

fn title_font() -> TextStyle<'static> {
    TextStyle::from((FONT, 24.0).into_font().style(FontStyle::Bold)).color(&BLACK)
}

/// Tick label text: plain decimals without trailing zeros, scientific for extremes.
fn tick_fmt(v: &f64) -> String {
    let v = *v;
    if v == 0.0 {
        return "0".into();
    }
    if v.abs() < 1e-3 || v.abs() >= 1e7 {
        return format!("{v:.2e}");
    }
    let s = format!("{v:.6}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" { "0".into() } else { s.into() }
}

// ---------------------------------------------------------------------------
// validation helpers

fn check_finite(what: &str, v: &[f64]) -> Result<(), ExportError> {
    crate::io::export::ensure_finite(what, v)
}

fn check_nonempty<T>(what: &str, v: &[T]) -> Result<(), ExportError> {
    if v.is_empty() {
        Err(ExportError::Empty { what: what.into() })
    } else {
        Ok(())
    }
}

fn check_len(what: &str, got: usize, want: usize) -> Result<(), ExportError> {
    if got == want {
        Ok(())
    } else {
        Err(ExportError::Shape {
            what: format!("{what} has {got} values, expected {want}"),
        })
    }
}

fn check_latitudes(what: &str, v: &[f64]) -> Result<(), ExportError> {
    check_finite(what, v)?;
    if v.iter().any(|x| x.abs() > 90.0) {
        return Err(ExportError::Shape {
            what: format!("{what} has a latitude outside -90..90 degrees"),
        });
    }
    Ok(())
}

fn check_polyline(what: &str, pts: &[(f64, f64)]) -> Result<(), ExportError> {
    if pts.iter().any(|(a, b)| !a.is_finite() || !b.is_finite()) {
        return Err(ExportError::NonFinite { what: what.into() });
    }
    Ok(())
}

/// Check a grid axis (finite, ≥ 2 points, strictly monotone) and return cell edges.
fn cell_edges(what: &str, v: &[f64]) -> Result<Vec<f64>, ExportError> {
    check_finite(what, v)?;
    if v.len() < 2 {
        return Err(ExportError::Shape {
            what: format!("{what} needs at least 2 grid points, got {}", v.len()),
        });
    }
    let inc = v[1] > v[0];
    if !v
        .windows(2)
        .all(|w| if inc { w[1] > w[0] } else { w[1] < w[0] })
    {
        return Err(ExportError::Shape {
            what: format!("{what} must be strictly increasing or strictly decreasing"),
        });
    }
    let n = v.len();
    let mut e = Vec::with_capacity(n + 1);
    e.push(v[0] - 0.5 * (v[1] - v[0]));
    for w in v.windows(2) {
        e.push(0.5 * (w[0] + w[1]));
    }
    e.push(v[n - 1] + 0.5 * (v[n - 1] - v[n - 2]));
    Ok(e)
}

fn min_max(it: impl IntoIterator<Item = f64>) -> Option<(f64, f64)> {
    it.into_iter().fold(None, |acc, v| match acc {
        None => Some((v, v)),
        Some((lo, hi)) => Some((lo.min(v), hi.max(v))),
    })
}

/// Range spanning the values with a small margin; degenerate spans widened.
fn padded(lo: f64, hi: f64, frac: f64) -> Range<f64> {
    if hi > lo {
        let p = (hi - lo) * frac;
        (lo - p)..(hi + p)
    } else {
        let w = if lo == 0.0 { 1.0 } else { lo.abs() * 0.05 };
        (lo - w)..(hi + w)
    }
}

// ---------------------------------------------------------------------------
// colours, markers, legend

/// Line colours, chosen to differ in lightness as well as hue.
const PALETTE: [RGBColor; 6] = [
    RGBColor(24, 34, 92),
    RGBColor(204, 88, 18),
    RGBColor(0, 122, 112),
    RGBColor(132, 58, 158),
    RGBColor(196, 160, 30),
    RGBColor(92, 92, 92),
];

fn palette(i: usize) -> RGBColor {
    PALETTE[i % PALETTE.len()]
}

#[derive(Clone, Copy, Debug, PartialEq)]
enum Shape {
    Circle,
    Square,
    Up,
    Diamond,
    Down,
}

#[derive(Clone, Copy, Debug)]
struct Mark {
    shape: Shape,
    filled: bool,
}

fn mark_for(i: usize) -> Mark {
    const SHAPES: [Shape; 5] = [
        Shape::Circle,
        Shape::Square,
        Shape::Up,
        Shape::Diamond,
        Shape::Down,
    ];
    Mark {
        shape: SHAPES[i % 5],
        filled: (i / 5).is_multiple_of(2),
    }
}

#[derive(Clone, Copy, Debug)]
enum Glyph {
    Mark(Mark, RGBColor),
    /// Fold point: open circle with a cross (⊗), in black.
    Fold,
    /// Ice-edge tick: a vertical bar.
    Tick(RGBColor),
}

fn draw_glyph<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    g: Glyph,
    (x, y): (i32, i32),
) -> PRes {
    match g {
        Glyph::Mark(m, colour) => {
            let r = 5;
            let fill = if m.filled { colour } else { WHITE };
            if m.shape == Shape::Circle {
                area.draw(&Circle::new((x, y), r, fill.filled())).pe()?;
                area.draw(&Circle::new((x, y), r, colour.stroke_width(2)))
                    .pe()?;
                return Ok(());
            }
            let pts: Vec<(i32, i32)> = match m.shape {
                Shape::Square => vec![
                    (x - r, y - r),
                    (x + r, y - r),
                    (x + r, y + r),
                    (x - r, y + r),
                ],
                Shape::Up => vec![(x, y - r - 1), (x + r + 1, y + r), (x - r - 1, y + r)],
                Shape::Down => vec![(x, y + r + 1), (x + r + 1, y - r), (x - r - 1, y - r)],
                _ => vec![
                    (x, y - r - 1),
                    (x + r + 1, y),
                    (x, y + r + 1),
                    (x - r - 1, y),
                ],
            };
            area.draw(&Polygon::new(pts.clone(), fill.filled())).pe()?;
            let mut closed = pts.clone();
            closed.push(pts[0]);
            area.draw(&PathElement::new(closed, colour.stroke_width(2)))
                .pe()?;
        }
        Glyph::Fold => {
            let r = 8;
            area.draw(&Circle::new((x, y), r, WHITE.filled())).pe()?;
            area.draw(&Circle::new((x, y), r, BLACK.stroke_width(2)))
                .pe()?;
            let d = 5;
            let st = BLACK.stroke_width(2);
            area.draw(&PathElement::new(vec![(x - d, y - d), (x + d, y + d)], st))
                .pe()?;
            area.draw(&PathElement::new(vec![(x - d, y + d), (x + d, y - d)], st))
                .pe()?;
        }
        Glyph::Tick(colour) => {
            area.draw(&PathElement::new(
                vec![(x, y - 13), (x, y + 13)],
                WHITE.stroke_width(6),
            ))
            .pe()?;
            area.draw(&PathElement::new(
                vec![(x, y - 12), (x, y + 12)],
                colour.stroke_width(3),
            ))
            .pe()?;
        }
    }
    Ok(())
}

fn draw_arrow<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    from: (i32, i32),
    to: (i32, i32),
) -> PRes {
    let colour = RGBColor(40, 40, 40);
    let (dx, dy) = ((to.0 - from.0) as f64, (to.1 - from.1) as f64);
    let len = dx.hypot(dy);
    if len < 1.0 {
        return Ok(());
    }
    let (ux, uy) = (dx / len, dy / len);
    let head = 12.0f64.min(len);
    let base = (to.0 as f64 - ux * head, to.1 as f64 - uy * head);
    let (px, py) = (-uy * 5.0, ux * 5.0);
    area.draw(&DashedPathElement::new(
        vec![from, (base.0 as i32, base.1 as i32)],
        4,
        3,
        colour.stroke_width(2),
    ))
    .pe()?;
    area.draw(&Polygon::new(
        vec![
            to,
            ((base.0 + px) as i32, (base.1 + py) as i32),
            ((base.0 - px) as i32, (base.1 - py) as i32),
        ],
        colour.filled(),
    ))
    .pe()?;
    Ok(())
}

enum Sample {
    Line {
        colour: RGBColor,
        dashed: bool,
        glyph: Option<Glyph>,
    },
    Glyph(Glyph),
    Swatch {
        fill: RGBColor,
        hatched: bool,
    },
    Arrow,
}

struct LegendItem {
    label: String,
    sample: Sample,
}

/// Legend entries for line styles: "stable" (solid) and, when any curve
/// has unstable parts, "unstable" (dashed).
fn push_stability_legend(items: &mut Vec<LegendItem>, any_unstable: bool) {
    for (label, dashed) in [("stable", false), ("unstable", true)] {
        if dashed && !any_unstable {
            continue;
        }
        items.push(item(
            label,
            Sample::Line {
                colour: BLACK,
                dashed,
                glyph: None,
            },
        ));
    }
}

fn item(label: impl Into<String>, sample: Sample) -> LegendItem {
    LegendItem {
        label: label.into(),
        sample,
    }
}

/// Draw a legend in its own column area (local pixel coordinates).
fn draw_legend<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    heading: &str,
    items: &[LegendItem],
    top: i32,
) -> PRes {
    let (w, h) = area.dim_in_pixel();
    let (w, h) = (w as i32, h as i32);
    let st = font(15.0);
    let x0 = 8;
    let mut y = top;
    area.draw(&Text::new(
        heading.to_string(),
        (x0, y),
        TextStyle::from((FONT, 16.0).into_font().style(FontStyle::Bold)),
    ))
    .pe()?;
    y += ROW_H + 4;
    let max_rows = ((h - y - 10) / ROW_H).max(1) as usize;
    let shown = if items.len() > max_rows {
        max_rows - 1
    } else {
        items.len()
    };
    for it in &items[..shown] {
        let cy = y + ROW_H / 2;
        let (sx0, sx1) = (x0, x0 + 40);
        match &it.sample {
            Sample::Line {
                colour,
                dashed,
                glyph,
            } => {
                let st = colour.stroke_width(2);
                if *dashed {
                    area.draw(&DashedPathElement::new(
                        vec![(sx0, cy), (sx1, cy)],
                        8,
                        5,
                        st,
                    ))
                    .pe()?;
                } else {
                    area.draw(&PathElement::new(vec![(sx0, cy), (sx1, cy)], st))
                        .pe()?;
                }
                if let Some(g) = glyph {
                    draw_glyph(area, *g, ((sx0 + sx1) / 2, cy))?;
                }
            }
            Sample::Glyph(g) => draw_glyph(area, *g, ((sx0 + sx1) / 2, cy))?,
            Sample::Swatch { fill, hatched } => {
                let (a, b) = ((sx0 + 4, cy - 8), (sx1 - 4, cy + 8));
                area.draw(&Rectangle::new([a, b], fill.filled())).pe()?;
                if *hatched {
                    hatch(area, a, b, BLACK)?;
                }
                area.draw(&Rectangle::new([a, b], BLACK.stroke_width(1)))
                    .pe()?;
            }
            Sample::Arrow => draw_arrow(area, (sx0 + 20, cy - 9), (sx0 + 20, cy + 9))?,
        }
        area.draw(&Text::new(it.label.clone(), (sx1 + 10, cy - 8), st.clone()))
            .pe()?;
        y += ROW_H;
        if y > h || sx1 > w {
            break;
        }
    }
    if shown < items.len() {
        area.draw(&Text::new(
            format!("… {} more", items.len() - shown),
            (x0, y + 4),
            st,
        ))
        .pe()?;
    }
    Ok(())
}

/// Diagonal hatching ("/") of a pixel rectangle, on a global lattice so that
/// adjacent hatched rectangles join into continuous stripes.
fn hatch<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    a: (i32, i32),
    b: (i32, i32),
    colour: RGBColor,
) -> PRes {
    const S: i32 = 9;
    let (x0, x1) = (a.0.min(b.0), a.0.max(b.0));
    let (y0, y1) = (a.1.min(b.1), a.1.max(b.1));
    let mut c = (x0 + y0).div_euclid(S) * S;
    while c <= x1 + y1 {
        let lo = x0.max(c - y1);
        let hi = x1.min(c - y0);
        if lo < hi {
            area.draw(&PathElement::new(
                vec![(lo, c - lo), (hi, c - hi)],
                colour.stroke_width(1),
            ))
            .pe()?;
        }
        c += S;
    }
    Ok(())
}

fn lab_to_srgb(l: f64, a: f64, b: f64) -> Option<[f64; 3]> {
    let fy = (l + 16.0) / 116.0;
    let fx = fy + a / 500.0;
    let fz = fy - b / 200.0;
    let d = 6.0 / 29.0;
    let finv = |t: f64| {
        if t > d {
            t * t * t
        } else {
            3.0 * d * d * (t - 4.0 / 29.0)
        }
    };
    let (x, y, z) = (0.95047 * finv(fx), finv(fy), 1.08883 * finv(fz));
    let lin = [
        3.2406 * x - 1.5372 * y - 0.4986 * z,
        -0.9689 * x + 1.8758 * y + 0.0415 * z,
        0.0557 * x - 0.2040 * y + 1.0570 * z,
    ];
    if lin.iter().any(|c| !(-1e-9..=1.0 + 1e-9).contains(c)) {
        return None;
    }
    Some(lin.map(|c| {
        let c = c.clamp(0.0, 1.0);
        if c <= 0.0031308 {
            12.92 * c
        } else {
            1.055 * c.powf(1.0 / 2.4) - 0.055
        }
    }))
}

/// sRGB colour of CIE L*C*h, reducing chroma until it is displayable
/// (lightness is kept exactly, so lightness ordering survives).
fn lch_colour(l: f64, c: f64, h_deg: f64) -> RGBColor {
    let h = h_deg.to_radians();
    let at = |c: f64| lab_to_srgb(l, c * h.cos(), c * h.sin());
    let rgb = match at(c) {
        Some(v) => v,
        None => {
            let (mut lo, mut hi) = (0.0, c);
            for _ in 0..30 {
                let mid = 0.5 * (lo + hi);
                if at(mid).is_some() {
                    lo = mid;
                } else {
                    hi = mid;
                }
            }
            at(lo).unwrap_or([l / 100.0; 3])
        }
    };
    let q = |v: f64| (v * 255.0).round().clamp(0.0, 255.0) as u8;
    RGBColor(q(rgb[0]), q(rgb[1]), q(rgb[2]))
}

/// The sequential colour map used for filled fields, `t` in 0…1 (clamped).
///
/// It runs from deep indigo through blue-teal and green to pale straw; CIE
/// lightness rises linearly from 14 to 96, so the map reads correctly when
/// printed in greyscale. Returns sRGB bytes.
pub fn sequential_colour(t: f64) -> [u8; 3] {
    let t = if t.is_finite() {
        t.clamp(0.0, 1.0)
    } else {
        0.0
    };
    let l = 14.0 + 82.0 * t;
    let c = 10.0 + 40.0 * (std::f64::consts::PI * t).sin();
    let h = 290.0 - 205.0 * t;
    let RGBColor(r, g, b) = lch_colour(l, c, h);
    [r, g, b]
}

/// WCAG relative luminance of an sRGB colour, 0 (black) … 1 (white).
fn relative_luminance(RGBColor(r, g, b): RGBColor) -> f64 {
    let lin = |v: u8| {
        let v = v as f64 / 255.0;
        if v <= 0.04045 {
            v / 12.92
        } else {
            ((v + 0.055) / 1.055).powf(2.4)
        }
    };
    0.2126 * lin(r) + 0.7152 * lin(g) + 0.0722 * lin(b)
}

fn seq(t: f64) -> RGBColor {
    let [r, g, b] = sequential_colour(t);
    RGBColor(r, g, b)
}

/// Fill colour of category `k` of `n`: lightness evenly spaced from light to dark.
fn category_colour(k: usize, n: usize) -> RGBColor {
    let f = if n > 1 {
        k as f64 / (n - 1) as f64
    } else {
        0.0
    };
    let l = 94.0 - 62.0 * f;
    lch_colour(l, 28.0, 95.0 + 137.508 * k as f64)
}

fn build_chart<'a, DB: DrawingBackend>(
    area: &'a DrawingArea<DB, Shift>,
    x: Range<f64>,
    y: Range<f64>,
    x_label: &str,
    y_label: &str,
) -> PRes<Chart<'a, DB>> {
    let mut chart = ChartBuilder::on(area)
        .margin(12)
        .x_label_area_size(48)
        .y_label_area_size(78)
        .build_cartesian_2d(x, y)
        .pe()?;
    chart
        .configure_mesh()
        .x_desc(x_label)
        .y_desc(y_label)
        .axis_desc_style(font(17.0))
        .label_style(font(14.0))
        .x_label_formatter(&tick_fmt)
        .y_label_formatter(&tick_fmt)
        .light_line_style(RGBColor(244, 244, 244).stroke_width(1))
        .bold_line_style(RGBColor(200, 200, 200).stroke_width(1))
        .axis_style(BLACK.stroke_width(1))
        .draw()
        .pe()?;
    Ok(chart)
}

/// Draw a polyline in data coordinates, solid or dashed.
fn draw_line<DB: DrawingBackend>(
    chart: &mut Chart<'_, DB>,
    pts: Vec<(f64, f64)>,
    colour: RGBColor,
    width: u32,
    dashed: bool,
) -> PRes {
    if pts.len() < 2 {
        return Ok(());
    }
    if dashed {
        chart
            .draw_series(DashedLineSeries::new(pts, 9, 6, colour.stroke_width(width)))
            .pe()?;
    } else {
        chart
            .draw_series(LineSeries::new(pts, colour.stroke_width(width)))
            .pe()?;
    }
    Ok(())
}

/// Black line with a white halo, readable over any fill.
fn draw_halo_line<DB: DrawingBackend>(chart: &mut Chart<'_, DB>, pts: &[(f64, f64)]) -> PRes {
    if pts.len() == 1 {
        let screen = chart.plotting_area().strip_coord_spec().use_screen_coord();
        let p = chart.backend_coord(&pts[0]);
        screen.draw(&Circle::new(p, 4, BLACK.filled())).pe()?;
        return Ok(());
    }
    draw_line(chart, pts.to_vec(), WHITE, 5, false)?;
    draw_line(chart, pts.to_vec(), BLACK, 2, false)
}

/// Indices at which to place markers along a curve of `n` points (about `k` of them).
fn marker_indices(n: usize, k: usize, offset: usize) -> impl Iterator<Item = usize> {
    let step = (n / k.max(1)).max(1);
    (offset % step..n).step_by(step)
}

fn linear_interp(xs: &[f64], ys: &[f64], x: f64) -> Option<f64> {
    // xs sorted ascending
    if xs.is_empty() {
        return None;
    }
    if x <= xs[0] {
        return Some(ys[0]);
    }
    for i in 1..xs.len() {
        if x <= xs[i] {
            let span = xs[i] - xs[i - 1];
            let f = if span > 0.0 {
                (x - xs[i - 1]) / span
            } else {
                0.0
            };
            return Some(ys[i - 1] + f * (ys[i] - ys[i - 1]));
        }
    }
    ys.last().copied()
}

fn split_legend<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
) -> (DrawingArea<DB, Shift>, DrawingArea<DB, Shift>) {
    let (w, _) = area.dim_in_pixel();
    area.split_horizontally(w.saturating_sub(LEGEND_WIDTH))
}

// ---------------------------------------------------------------------------
// profile figure

struct ProfilePaint<'a> {
    title: &'a str,
    curves: Vec<SortedCurve<'a>>,
    lat: Range<f64>,
    temp: Range<f64>,
    alb: Range<f64>,
}

struct SortedCurve<'a> {
    src: &'a ProfileCurve,
    lat: Vec<f64>,
    temp: Vec<f64>,
    alb: Vec<f64>,
}

/// Temperature (top) and albedo (bottom) against latitude for several states.
///
/// One line per curve (solid if stable, dashed if not, with its own colour
/// and marker); ice edges appear as vertical ticks on the temperature
/// profile. The latitude axis spans 0…90° when all data are in the northern
/// hemisphere, −90…90° otherwise.
///
/// Errors: no curves, a curve with no points or unequal vector lengths,
/// latitudes outside ±90°, or any non-finite value.
pub fn profile_figure(title: &str, curves: &[ProfileCurve]) -> Result<Figure, ExportError> {
    check_nonempty("profile curve list", curves)?;
    let mut sorted = Vec::with_capacity(curves.len());
    for (k, c) in curves.iter().enumerate() {
        let name = |q: &str| format!("{q} of profile curve {k} ('{}')", c.label);
        check_nonempty(&name("latitude"), &c.latitude_deg)?;
        check_len(
            &name("temperature"),
            c.temperature_c.len(),
            c.latitude_deg.len(),
        )?;
        check_len(&name("albedo"), c.albedo.len(), c.latitude_deg.len())?;
        check_latitudes(&name("latitude"), &c.latitude_deg)?;
        check_finite(&name("temperature"), &c.temperature_c)?;
        check_finite(&name("albedo"), &c.albedo)?;
        check_latitudes(&name("ice edge latitude"), &c.ice_edges_deg)?;
        let mut idx: Vec<usize> = (0..c.latitude_deg.len()).collect();
        idx.sort_by(|&a, &b| c.latitude_deg[a].total_cmp(&c.latitude_deg[b]));
        sorted.push(SortedCurve {
            src: c,
            lat: idx.iter().map(|&i| c.latitude_deg[i]).collect(),
            temp: idx.iter().map(|&i| c.temperature_c[i]).collect(),
            alb: idx.iter().map(|&i| c.albedo[i]).collect(),
        });
    }
    let all_lat = curves
        .iter()
        .flat_map(|c| c.latitude_deg.iter().chain(&c.ice_edges_deg).copied());
    let (lat_lo, _) = min_max(all_lat).unwrap_or((0.0, 90.0));
    let lat = if lat_lo >= 0.0 {
        0.0..90.0
    } else {
        -90.0..90.0
    };
    let (t_lo, t_hi) =
        min_max(curves.iter().flat_map(|c| c.temperature_c.iter().copied())).unwrap_or((0.0, 1.0));
    let (a_lo, a_hi) =
        min_max(curves.iter().flat_map(|c| c.albedo.iter().copied())).unwrap_or((0.0, 1.0));
    let alb = padded(a_lo.min(0.0), a_hi.max(1.0), 0.03);
    render(&ProfilePaint {
        title,
        curves: sorted,
        lat,
        temp: padded(t_lo, t_hi, 0.06),
        alb,
    })
}

impl Paint for ProfilePaint<'_> {
    fn paint<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> PRes {
        let area = root.titled(self.title, title_font()).pe()?;
        let (plots, legend) = split_legend(&area);
        let (_, h) = plots.dim_in_pixel();
        let (top, bottom) = plots.split_vertically(h / 2);
        let mut tchart = build_chart(
            &top,
            self.lat.clone(),
            self.temp.clone(),
            "Latitude (°)",
            "Temperature (°C)",
        )?;
        let mut achart = build_chart(
            &bottom,
            self.lat.clone(),
            self.alb.clone(),
            "Latitude (°)",
            "Albedo (fraction)",
        )?;
        let tscreen = tchart.plotting_area().strip_coord_spec().use_screen_coord();
        let ascreen = achart.plotting_area().strip_coord_spec().use_screen_coord();
        let mut items = Vec::new();
        let mut any_unstable = false;
        for (k, c) in self.curves.iter().enumerate() {
            let colour = palette(k);
            let mark = mark_for(k);
            let dashed = !c.src.stable;
            any_unstable |= dashed;
            let tp: Vec<(f64, f64)> = c.lat.iter().copied().zip(c.temp.iter().copied()).collect();
            let ap: Vec<(f64, f64)> = c.lat.iter().copied().zip(c.alb.iter().copied()).collect();
            draw_line(&mut tchart, tp.clone(), colour, 2, dashed)?;
            draw_line(&mut achart, ap.clone(), colour, 2, dashed)?;
            for i in marker_indices(tp.len(), 7, k) {
                draw_glyph(
                    &tscreen,
                    Glyph::Mark(mark, colour),
                    tchart.backend_coord(&tp[i]),
                )?;
                draw_glyph(
                    &ascreen,
                    Glyph::Mark(mark, colour),
                    achart.backend_coord(&ap[i]),
                )?;
            }
            for &edge in &c.src.ice_edges_deg {
                if let Some(t) = linear_interp(&c.lat, &c.temp, edge) {
                    draw_glyph(
                        &tscreen,
                        Glyph::Tick(colour),
                        tchart.backend_coord(&(edge, t)),
                    )?;
                }
            }
            let label = if dashed {
                format!("{} (unstable)", c.src.label)
            } else {
                c.src.label.clone()
            };
            items.push(item(
                label,
                Sample::Line {
                    colour,
                    dashed,
                    glyph: Some(Glyph::Mark(mark, colour)),
                },
            ));
        }
        if self.curves.iter().any(|c| !c.src.ice_edges_deg.is_empty()) {
            items.push(item("ice edge", Sample::Glyph(Glyph::Tick(BLACK))));
        }
        push_stability_legend(&mut items, any_unstable);
        draw_legend(&legend, "States", &items, 14)
    }
}

// ---------------------------------------------------------------------------
// field figure

struct FieldPaint<'a> {
    title: &'a str,
    x_label: &'a str,
    y_label: &'a str,
    colour_label: &'a str,
    xe: Vec<f64>,
    ye: Vec<f64>,
    values: &'a [f64],
    vmin: f64,
    vmax: f64,
    overlay: &'a [Vec<(f64, f64)>],
}

/// A filled two-dimensional field with a colour bar and optional overlay lines.
///
/// `values[j * xs.len() + i]` is the value at `(xs[i], ys[j])`; each value
/// fills the cell around its grid point. `xs` and `ys` need at least two
/// strictly monotone points. Overlay polylines (e.g. the ice edge through the
/// year) are drawn black on a white halo; empty polylines are ignored.
///
/// Errors: too few grid points, non-monotone axes, wrong `values` length, or
/// any non-finite value (named).
#[allow(clippy::too_many_arguments)]
pub fn field_figure(
    title: &str,
    x_label: &str,
    y_label: &str,
    colour_label: &str,
    xs: &[f64],
    ys: &[f64],
    values: &[f64],
    overlay: &[Vec<(f64, f64)>],
) -> Result<Figure, ExportError> {
    let xe = cell_edges("field x coordinate", xs)?;
    let ye = cell_edges("field y coordinate", ys)?;
    check_len("field values", values.len(), xs.len() * ys.len())?;
    check_finite(&format!("field values ({colour_label})"), values)?;
    for (k, line) in overlay.iter().enumerate() {
        check_polyline(&format!("overlay line {k}"), line)?;
    }
    let (vmin, vmax) = min_max(values.iter().copied()).unwrap_or((0.0, 1.0));
    let (vmin, vmax) = if vmax > vmin {
        (vmin, vmax)
    } else {
        let r = padded(vmin, vmax, 0.0);
        (r.start, r.end)
    };
    render(&FieldPaint {
        title,
        x_label,
        y_label,
        colour_label,
        xe,
        ye,
        values,
        vmin,
        vmax,
        overlay,
    })
}

fn edge_range(e: &[f64]) -> Range<f64> {
    let (a, b) = (e[0], e[e.len() - 1]);
    a.min(b)..a.max(b)
}

impl Paint for FieldPaint<'_> {
    fn paint<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> PRes {
        let area = root.titled(self.title, title_font()).pe()?;
        let (w, _) = area.dim_in_pixel();
        let (main, bar) = area.split_horizontally(w.saturating_sub(140));
        let mut chart = build_chart(
            &main,
            edge_range(&self.xe),
            edge_range(&self.ye),
            self.x_label,
            self.y_label,
        )?;
        let nx = self.xe.len() - 1;
        let span = self.vmax - self.vmin;
        let level = |v: f64| (((v - self.vmin) / span) * 255.0).round() as i32;
        let mut rects = Vec::new();
        for j in 0..self.ye.len() - 1 {
            let row = &self.values[j * nx..(j + 1) * nx];
            let mut i0 = 0;
            while i0 < nx {
                let lv = level(row[i0]);
                let mut i1 = i0 + 1;
                while i1 < nx && level(row[i1]) == lv {
                    i1 += 1;
                }
                rects.push(Rectangle::new(
                    [(self.xe[i0], self.ye[j]), (self.xe[i1], self.ye[j + 1])],
                    seq(lv as f64 / 255.0).filled(),
                ));
                i0 = i1;
            }
        }
        chart.draw_series(rects).pe()?;
        for line in self.overlay.iter().filter(|l| !l.is_empty()) {
            draw_halo_line(&mut chart, line)?;
        }
        // Redraw the frame over the cells.
        let (xr, yr) = (edge_range(&self.xe), edge_range(&self.ye));
        chart
            .draw_series(std::iter::once(Rectangle::new(
                [(xr.start, yr.start), (xr.end, yr.end)],
                BLACK.stroke_width(1),
            )))
            .pe()?;

        // Colour bar.
        let mut cb = ChartBuilder::on(&bar)
            .margin(12)
            .margin_left(8)
            .margin_right(20)
            .x_label_area_size(48)
            .y_label_area_size(66)
            .build_cartesian_2d(0.0..1.0, self.vmin..self.vmax)
            .pe()?;
        cb.configure_mesh()
            .disable_x_mesh()
            .disable_y_mesh()
            .x_labels(0)
            .y_desc(self.colour_label)
            .axis_desc_style(font(17.0))
            .label_style(font(14.0))
            .y_label_formatter(&tick_fmt)
            .axis_style(BLACK.stroke_width(1))
            .draw()
            .pe()?;
        let n = 128;
        cb.draw_series((0..n).map(|k| {
            let a = self.vmin + span * k as f64 / n as f64;
            let b = self.vmin + span * (k + 1) as f64 / n as f64;
            Rectangle::new(
                [(0.0, a), (1.0, b)],
                seq((k as f64 + 0.5) / n as f64).filled(),
            )
        }))
        .pe()?;
        cb.draw_series(std::iter::once(Rectangle::new(
            [(0.0, self.vmin), (1.0, self.vmax)],
            BLACK.stroke_width(1),
        )))
        .pe()?;
        Ok(())
    }
}

// ---------------------------------------------------------------------------
// hysteresis figure

struct HystPaint<'a> {
    title: &'a str,
    param_label: &'a str,
    branches: &'a [BranchCurve],
    folds: &'a [FoldMark],
    p: Range<f64>,
    ice: Range<f64>,
    gm: Range<f64>,
}

/// Ice-edge latitude (top) and global-mean temperature (bottom) along
/// continuation branches against a control parameter.
///
/// Consecutive points that are both stable are joined by solid segments; a
/// segment touching an unstable point is dashed. Folds get a ⊗ marker, and a
/// dashed arrow runs from a fold to its jump target (same parameter value)
/// where one is given.
///
/// Errors: no branches, a branch with no points or unequal vector lengths,
/// ice-edge latitudes outside ±90°, or any non-finite value.
pub fn hysteresis_figure(
    title: &str,
    param_label: &str,
    branches: &[BranchCurve],
    folds: &[FoldMark],
) -> Result<Figure, ExportError> {
    check_nonempty("branch list", branches)?;
    for b in branches {
        let name = |q: &str| format!("{q} of branch {}", b.id);
        check_nonempty(&name("parameter"), &b.param)?;
        check_len(&name("ice edge"), b.ice_edge_deg.len(), b.param.len())?;
        check_len(
            &name("global mean temperature"),
            b.global_mean_c.len(),
            b.param.len(),
        )?;
        check_len(&name("stability flags"), b.stable.len(), b.param.len())?;
        check_finite(&name("parameter"), &b.param)?;
        check_latitudes(&name("ice edge"), &b.ice_edge_deg)?;
        check_finite(&name("global mean temperature"), &b.global_mean_c)?;
    }
    for (k, f) in folds.iter().enumerate() {
        let name = |q: &str| format!("{q} of fold {k}");
        check_finite(&name("parameter"), &[f.param])?;
        check_latitudes(&name("ice edge"), &[f.ice_edge_deg])?;
        check_finite(&name("global mean temperature"), &[f.global_mean_c])?;
        if let Some(v) = f.jump_to_ice_edge_deg {
            check_latitudes(&name("jump target ice edge"), &[v])?;
        }
        if let Some(v) = f.jump_to_global_mean_c {
            check_finite(&name("jump target global mean temperature"), &[v])?;
        }
    }
    let ps = branches
        .iter()
        .flat_map(|b| b.param.iter().copied())
        .chain(folds.iter().map(|f| f.param));
    let (p_lo, p_hi) = min_max(ps).unwrap_or((0.0, 1.0));
    let ice_vals = branches
        .iter()
        .flat_map(|b| b.ice_edge_deg.iter().copied())
        .chain(
            folds
                .iter()
                .flat_map(|f| [Some(f.ice_edge_deg), f.jump_to_ice_edge_deg])
                .flatten(),
        );
    let (i_lo, i_hi) = min_max(ice_vals).unwrap_or((0.0, 90.0));
    let ice = padded(i_lo.min(0.0), i_hi.max(90.0), 0.02);
    let gm_vals = branches
        .iter()
        .flat_map(|b| b.global_mean_c.iter().copied())
        .chain(
            folds
                .iter()
                .flat_map(|f| [Some(f.global_mean_c), f.jump_to_global_mean_c])
                .flatten(),
        );
    let (g_lo, g_hi) = min_max(gm_vals).unwrap_or((0.0, 1.0));
    render(&HystPaint {
        title,
        param_label,
        branches,
        folds,
        p: padded(p_lo, p_hi, 0.03),
        ice,
        gm: padded(g_lo, g_hi, 0.06),
    })
}

/// Split a branch into maximal runs of equal line style; returns (dashed, points).
fn styled_runs(param: &[f64], val: &[f64], stable: &[bool]) -> Vec<(bool, Vec<(f64, f64)>)> {
    let mut runs: Vec<(bool, Vec<(f64, f64)>)> = Vec::new();
    for i in 1..param.len() {
        let dashed = !(stable[i - 1] && stable[i]);
        match runs.last_mut() {
            Some((d, pts)) if *d == dashed => pts.push((param[i], val[i])),
            _ => runs.push((dashed, vec![(param[i - 1], val[i - 1]), (param[i], val[i])])),
        }
    }
    runs
}

impl Paint for HystPaint<'_> {
    fn paint<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> PRes {
        let area = root.titled(self.title, title_font()).pe()?;
        let (plots, legend) = split_legend(&area);
        let (_, h) = plots.dim_in_pixel();
        let (top, bottom) = plots.split_vertically(h / 2);
        let mut ichart = build_chart(
            &top,
            self.p.clone(),
            self.ice.clone(),
            self.param_label,
            "Ice-edge latitude (°)",
        )?;
        let mut gchart = build_chart(
            &bottom,
            self.p.clone(),
            self.gm.clone(),
            self.param_label,
            "Global-mean temperature (°C)",
        )?;
        let iscreen = ichart.plotting_area().strip_coord_spec().use_screen_coord();
        let gscreen = gchart.plotting_area().strip_coord_spec().use_screen_coord();
        let mut items = Vec::new();
        let mut any_unstable = false;
        for (k, b) in self.branches.iter().enumerate() {
            let colour = palette(b.id);
            let mark = mark_for(b.id);
            for (dashed, pts) in styled_runs(&b.param, &b.ice_edge_deg, &b.stable) {
                any_unstable |= dashed;
                draw_line(&mut ichart, pts, colour, 2, dashed)?;
            }
            for (dashed, pts) in styled_runs(&b.param, &b.global_mean_c, &b.stable) {
                draw_line(&mut gchart, pts, colour, 2, dashed)?;
            }
            any_unstable |= b.stable.iter().any(|s| !s);
            for i in marker_indices(b.param.len(), 9, k) {
                let g = Glyph::Mark(mark, colour);
                draw_glyph(
                    &iscreen,
                    g,
                    ichart.backend_coord(&(b.param[i], b.ice_edge_deg[i])),
                )?;
                draw_glyph(
                    &gscreen,
                    g,
                    gchart.backend_coord(&(b.param[i], b.global_mean_c[i])),
                )?;
            }
            items.push(item(
                format!("branch {}", b.id),
                Sample::Line {
                    colour,
                    dashed: false,
                    glyph: Some(Glyph::Mark(mark, colour)),
                },
            ));
        }
        let mut any_jump = false;
        for f in self.folds {
            let fi = ichart.backend_coord(&(f.param, f.ice_edge_deg));
            let fg = gchart.backend_coord(&(f.param, f.global_mean_c));
            if let Some(t) = f.jump_to_ice_edge_deg {
                draw_arrow(&iscreen, fi, ichart.backend_coord(&(f.param, t)))?;
                any_jump = true;
            }
            if let Some(t) = f.jump_to_global_mean_c {
                draw_arrow(&gscreen, fg, gchart.backend_coord(&(f.param, t)))?;
                any_jump = true;
            }
            draw_glyph(&iscreen, Glyph::Fold, fi)?;
            draw_glyph(&gscreen, Glyph::Fold, fg)?;
        }
        push_stability_legend(&mut items, any_unstable);
        if !self.folds.is_empty() {
            items.push(item("fold", Sample::Glyph(Glyph::Fold)));
        }
        if any_jump {
            items.push(item("jump after fold", Sample::Arrow));
        }
        draw_legend(&legend, "Branches", &items, 14)
    }
}

// ---------------------------------------------------------------------------
// regime figure

struct RegimePaint<'a> {
    title: &'a str,
    x_label: &'a str,
    y_label: &'a str,
    xe: Vec<f64>,
    ye: Vec<f64>,
    regime: &'a [u32],
    names: &'a [String],
    bistable: &'a [bool],
    boundaries: &'a [(String, Vec<(f64, f64)>)],
}

/// A categorical map of climate regimes over a two-parameter grid.
///
/// Cell `(i, j)` (around `(xs[i], ys[j])`) shows regime
/// `regime[j * xs.len() + i]`, an index into `regime_names`; regimes get
/// fills of distinct lightness (first name lightest). Cells flagged in
/// `bistable` are hatched. Boundary polylines are drawn black on a white
/// halo and labelled at their middle point; empty ones are ignored.
///
/// Errors: no regime names, too few or non-monotone grid points, wrong
/// lengths, a regime index without a name, or any non-finite coordinate.
#[allow(clippy::too_many_arguments)]
pub fn regime_figure(
    title: &str,
    x_label: &str,
    y_label: &str,
    xs: &[f64],
    ys: &[f64],
    regime: &[u32],
    regime_names: &[String],
    bistable: &[bool],
    boundaries: &[(String, Vec<(f64, f64)>)],
) -> Result<Figure, ExportError> {
    check_nonempty("regime name list", regime_names)?;
    let xe = cell_edges("regime map x coordinate", xs)?;
    let ye = cell_edges("regime map y coordinate", ys)?;
    check_len("regime map", regime.len(), xs.len() * ys.len())?;
    check_len("bistability map", bistable.len(), xs.len() * ys.len())?;
    if let Some(&r) = regime.iter().find(|&&r| r as usize >= regime_names.len()) {
        return Err(ExportError::Shape {
            what: format!(
                "regime index {r} has no name ({} regime names given)",
                regime_names.len()
            ),
        });
    }
    for (name, line) in boundaries {
        check_polyline(&format!("boundary '{name}'"), line)?;
    }
    render(&RegimePaint {
        title,
        x_label,
        y_label,
        xe,
        ye,
        regime,
        names: regime_names,
        bistable,
        boundaries,
    })
}

impl Paint for RegimePaint<'_> {
    fn paint<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> PRes {
        let area = root.titled(self.title, title_font()).pe()?;
        let (main, legend) = split_legend(&area);
        let mut chart = build_chart(
            &main,
            edge_range(&self.xe),
            edge_range(&self.ye),
            self.x_label,
            self.y_label,
        )?;
        let screen = chart.plotting_area().strip_coord_spec().use_screen_coord();
        let n = self.names.len();
        let colours: Vec<RGBColor> = (0..n).map(|k| category_colour(k, n)).collect();
        let nx = self.xe.len() - 1;
        let mut hatched = Vec::new();
        for j in 0..self.ye.len() - 1 {
            let mut i0 = 0;
            while i0 < nx {
                let key = (self.regime[j * nx + i0], self.bistable[j * nx + i0]);
                let mut i1 = i0 + 1;
                while i1 < nx && (self.regime[j * nx + i1], self.bistable[j * nx + i1]) == key {
                    i1 += 1;
                }
                let fill = colours[key.0 as usize];
                let a = chart.backend_coord(&(self.xe[i0], self.ye[j]));
                let b = chart.backend_coord(&(self.xe[i1], self.ye[j + 1]));
                let (lo, hi) = ((a.0.min(b.0), a.1.min(b.1)), (a.0.max(b.0), a.1.max(b.1)));
                screen.draw(&Rectangle::new([lo, hi], fill.filled())).pe()?;
                if key.1 {
                    hatched.push((lo, hi, fill));
                }
                i0 = i1;
            }
        }
        // Hatch after all fills so that no later fill covers part of a stripe.
        // Dark fills get white stripes, light fills black ones.
        for (lo, hi, fill) in hatched {
            let ink = if relative_luminance(fill) < 0.18 {
                WHITE
            } else {
                BLACK
            };
            hatch(&screen, lo, hi, ink)?;
        }
        let st = font(14.0);
        for (name, line) in self.boundaries.iter().filter(|(_, l)| !l.is_empty()) {
            draw_halo_line(&mut chart, line)?;
            let p = chart.backend_coord(&line[line.len() / 2]);
            let (w, h) = screen.estimate_text_size(name, &st).pe()?;
            let (xr, yr) = screen.get_pixel_range();
            let (w, h) = (w as i32, h as i32);
            let x = (p.0 + 6).min(xr.end - w - 6).max(xr.start + 4);
            let y = (p.1 - h - 6).max(yr.start + 4).min(yr.end - h - 4);
            screen
                .draw(&Rectangle::new(
                    [(x - 3, y - 2), (x + w + 3, y + h + 2)],
                    WHITE.mix(0.85).filled(),
                ))
                .pe()?;
            screen
                .draw(&Text::new(name.clone(), (x, y), st.clone()))
                .pe()?;
        }
        let (xr, yr) = (edge_range(&self.xe), edge_range(&self.ye));
        chart
            .draw_series(std::iter::once(Rectangle::new(
                [(xr.start, yr.start), (xr.end, yr.end)],
                BLACK.stroke_width(1),
            )))
            .pe()?;
        let mut items: Vec<LegendItem> = self
            .names
            .iter()
            .zip(&colours)
            .map(|(name, &fill)| {
                item(
                    name.clone(),
                    Sample::Swatch {
                        fill,
                        hatched: false,
                    },
                )
            })
            .collect();
        if self.bistable.iter().any(|&b| b) {
            items.push(item(
                "bistable",
                Sample::Swatch {
                    fill: WHITE,
                    hatched: true,
                },
            ));
        }
        draw_legend(&legend, "Regimes", &items, 14)
    }
}

// ---------------------------------------------------------------------------

#[cfg(test)]
mod tests {
    use super::*;

    const PNG_SIG: [u8; 8] = [0x89, b'P', b'N', b'G', 0x0D, 0x0A, 0x1A, 0x0A];

    fn check_fig(f: &Figure) {
        let s = std::str::from_utf8(&f.svg).unwrap();
        assert!(s.contains("<svg"));
        assert!(!s.contains("NaN"));
        assert_eq!(&f.png[..8], &PNG_SIG);
        // decode to be sure the PNG is complete
        let dec = png::Decoder::new(&f.png[..]);
        let mut r = dec.read_info().unwrap();
        let mut buf = vec![0; r.output_buffer_size()];
        let info = r.next_frame(&mut buf).unwrap();
        assert_eq!((info.width, info.height), (FIGURE_WIDTH, FIGURE_HEIGHT));
        // something other than white was drawn
        assert!(buf.iter().any(|&b| b < 128));
    }

    fn curve(label: &str, stable: bool, shift: f64) -> ProfileCurve {
        let lat: Vec<f64> = (0..18).map(|i| 2.5 + 5.0 * i as f64).collect();
        ProfileCurve {
            label: label.into(),
            temperature_c: lat
                .iter()
                .map(|l: &f64| 30.0 - 45.0 * (l.to_radians().sin()).powi(2) + shift)
                .collect(),
            albedo: lat
                .iter()
                .map(|&l| if l > 60.0 { 0.62 } else { 0.3 })
                .collect(),
            latitude_deg: lat,
            ice_edges_deg: vec![60.0],
            stable,
        }
    }

    #[test]
    fn profile_ok_and_errors() {
        let f = profile_figure(
            "Equilibria at S = 1361 W m⁻²",
            &[curve("warm", true, 0.0), curve("cold", false, -20.0)],
        )
        .unwrap();
        check_fig(&f);
        assert!(
            std::str::from_utf8(&f.svg)
                .unwrap()
                .contains("Latitude (°)")
        );
        assert!(matches!(
            profile_figure("x", &[]),
            Err(ExportError::Empty { .. })
        ));
        let mut bad = curve("bad", true, 0.0);
        bad.temperature_c[3] = f64::NAN;
        match profile_figure("x", &[bad]) {
            Err(ExportError::NonFinite { what }) => assert!(what.contains("temperature")),
            other => panic!("{other:?}"),
        }
        let mut bad = curve("bad", true, 0.0);
        bad.albedo.pop();
        assert!(matches!(
            profile_figure("x", &[bad]),
            Err(ExportError::Shape { .. })
        ));
        let mut bad = curve("bad", true, 0.0);
        bad.latitude_deg.clear();
        bad.temperature_c.clear();
        bad.albedo.clear();
        assert!(matches!(
            profile_figure("x", &[bad]),
            Err(ExportError::Empty { .. })
        ));
        // southern hemisphere data use -90..90
        let mut both = curve("both", true, 0.0);
        both.latitude_deg = both.latitude_deg.iter().map(|l| l * 2.0 - 90.0).collect();
        check_fig(&profile_figure("global", &[both]).unwrap());
    }

    #[test]
    fn field_ok_and_errors() {
        let xs: Vec<f64> = (0..36).map(|i| -87.5 + 5.0 * i as f64).collect();
        let ys: Vec<f64> = (0..73).map(|d| d as f64 * 5.0).collect();
        let mut v = Vec::new();
        for y in &ys {
            for x in &xs {
                v.push(
                    400.0
                        * (1.0
                            + (x.to_radians() + (y / 365.0 * std::f64::consts::TAU).sin() * 0.4)
                                .cos())
                        / 2.0,
                );
            }
        }
        let edge: Vec<(f64, f64)> = ys
            .iter()
            .map(|&d| (60.0 + 10.0 * (d / 58.0).sin(), d))
            .collect();
        let f = field_figure(
            "Daily-mean insolation",
            "Latitude (°)",
            "Day of year",
            "Insolation (W m⁻²)",
            &xs,
            &ys,
            &v,
            &[edge.clone(), vec![]],
        )
        .unwrap();
        check_fig(&f);
        let mut bad = v.clone();
        bad[10] = f64::INFINITY;
        assert!(matches!(
            field_figure("t", "x", "y", "c", &xs, &ys, &bad, &[]),
            Err(ExportError::NonFinite { .. })
        ));
        assert!(matches!(
            field_figure("t", "x", "y", "c", &xs, &ys, &v[1..], &[]),
            Err(ExportError::Shape { .. })
        ));
        assert!(field_figure("t", "x", "y", "c", &[], &[], &[], &[]).is_err());
        assert!(
            field_figure("t", "x", "y", "c", &[1.0, 1.0], &[0.0, 1.0], &[0.0; 4], &[]).is_err()
        );
        let bad_line = vec![(0.0, f64::NAN)];
        assert!(matches!(
            field_figure("t", "x", "y", "c", &xs, &ys, &v, &[bad_line]),
            Err(ExportError::NonFinite { .. })
        ));
        // constant field is fine
        check_fig(
            &field_figure("t", "x", "y", "c", &[0.0, 1.0], &[0.0, 1.0], &[3.0; 4], &[]).unwrap(),
        );
    }

    fn branches() -> (Vec<BranchCurve>, Vec<FoldMark>) {
        // An S-shaped curve: ice edge vs parameter with two folds.
        let mut b = BranchCurve {
            id: 0,
            ..Default::default()
        };
        for k in 0..=60 {
            let s = -1.2 + 2.4 * k as f64 / 60.0;
            let p = 1300.0 + 60.0 * (s - s * s * s);
            b.param.push(p + 80.0 * s);
            b.ice_edge_deg.push(45.0 - 35.0 * s);
            b.global_mean_c.push(10.0 * s);
            b.stable.push(s.abs() > 0.45);
        }
        let snow = BranchCurve {
            id: 1,
            param: vec![1200.0, 1300.0, 1400.0],
            ice_edge_deg: vec![0.0; 3],
            global_mean_c: vec![-40.0, -35.0, -30.0],
            stable: vec![true; 3],
        };
        let folds = vec![FoldMark {
            param: 1310.0,
            ice_edge_deg: 30.0,
            global_mean_c: 4.0,
            jump_to_ice_edge_deg: Some(0.0),
            jump_to_global_mean_c: Some(-35.0),
        }];
        (vec![b, snow], folds)
    }

    #[test]
    fn hysteresis_ok_and_errors() {
        let (b, f) = branches();
        check_fig(&hysteresis_figure("Hysteresis", "Solar constant (W m⁻²)", &b, &f).unwrap());
        check_fig(&hysteresis_figure("No folds", "S (W m⁻²)", &b[..1], &[]).unwrap());
        assert!(matches!(
            hysteresis_figure("x", "p", &[], &[]),
            Err(ExportError::Empty { .. })
        ));
        let mut bad = b.clone();
        bad[0].global_mean_c[5] = f64::NAN;
        assert!(matches!(
            hysteresis_figure("x", "p", &bad, &f),
            Err(ExportError::NonFinite { .. })
        ));
        let mut bad = b.clone();
        bad[1].stable.pop();
        assert!(matches!(
            hysteresis_figure("x", "p", &bad, &f),
            Err(ExportError::Shape { .. })
        ));
        let mut badf = f.clone();
        badf[0].jump_to_global_mean_c = Some(f64::NEG_INFINITY);
        assert!(matches!(
            hysteresis_figure("x", "p", &b, &badf),
            Err(ExportError::NonFinite { .. })
        ));
    }

    #[test]
    fn styled_runs_split_on_stability() {
        let runs = styled_runs(
            &[0.0, 1.0, 2.0, 3.0, 4.0],
            &[0.0; 5],
            &[true, true, false, true, true],
        );
        let kinds: Vec<(bool, usize)> = runs.iter().map(|(d, p)| (*d, p.len())).collect();
        assert_eq!(kinds, vec![(false, 2), (true, 3), (false, 2)]);
    }

    #[test]
    fn regime_ok_and_errors() {
        let xs: Vec<f64> = (0..40).map(|i| 1200.0 + 10.0 * i as f64).collect();
        let ys: Vec<f64> = (0..30).map(|j| 0.1 + 0.05 * j as f64).collect();
        let mut reg = Vec::new();
        let mut bi = Vec::new();
        for (j, _) in ys.iter().enumerate() {
            for (i, _) in xs.iter().enumerate() {
                let s = i as i32 - j as i32;
                reg.push(if s < 5 {
                    0
                } else if s < 15 {
                    1
                } else if s < 25 {
                    2
                } else {
                    3
                });
                bi.push((8..12).contains(&s));
            }
        }
        let names: Vec<String> = ["snowball", "large ice cap", "small ice cap", "ice-free"]
            .iter()
            .map(|s| s.to_string())
            .collect();
        let bnd = vec![
            (
                "snowball onset".to_string(),
                vec![(1250.0, 0.1), (1500.0, 1.55)],
            ),
            ("empty".to_string(), vec![]),
        ];
        check_fig(
            &regime_figure(
                "Regimes",
                "Solar constant (W m⁻²)",
                "Heat transport D (W m⁻² K⁻¹)",
                &xs,
                &ys,
                &reg,
                &names,
                &bi,
                &bnd,
            )
            .unwrap(),
        );
        let mut bad = reg.clone();
        bad[0] = 9;
        assert!(matches!(
            regime_figure("r", "x", "y", &xs, &ys, &bad, &names, &bi, &[]),
            Err(ExportError::Shape { .. })
        ));
        assert!(matches!(
            regime_figure("r", "x", "y", &xs, &ys, &reg, &[], &bi, &[]),
            Err(ExportError::Empty { .. })
        ));
        assert!(regime_figure("r", "x", "y", &xs, &ys, &reg, &names, &bi[1..], &[]).is_err());
        let badb = vec![("b".to_string(), vec![(f64::NAN, 0.0)])];
        assert!(matches!(
            regime_figure("r", "x", "y", &xs, &ys, &reg, &names, &bi, &badb),
            Err(ExportError::NonFinite { .. })
        ));
    }

    fn luminance([r, g, b]: [u8; 3]) -> f64 {
        relative_luminance(RGBColor(r, g, b))
    }

    #[test]
    fn colour_map_is_monotone_in_lightness() {
        let mut prev = -1.0;
        for k in 0..=64 {
            let y = luminance(sequential_colour(k as f64 / 64.0));
            assert!(y > prev, "luminance not increasing at step {k}");
            prev = y;
        }
        let mut prev = 2.0;
        for k in 0..6 {
            let RGBColor(r, g, b) = category_colour(k, 6);
            let y = luminance([r, g, b]);
            assert!(y < prev - 0.03, "category lightness too close at {k}");
            prev = y;
        }
    }

    #[test]
    fn tick_format() {
        assert_eq!(tick_fmt(&30.0), "30");
        assert_eq!(tick_fmt(&-0.25), "-0.25");
        assert_eq!(tick_fmt(&1361.5), "1361.5");
        assert_eq!(tick_fmt(&0.0), "0");
    }
}
