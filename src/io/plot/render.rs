//! Drawing backends, the embedded font, PNG encoding and tick text.

use std::sync::OnceLock;

use plotters::coord::Shift;
use plotters::coord::types::RangedCoordf64;
use plotters::prelude::*;
use plotters::style::{FontStyle, register_font};

use super::{FIGURE_HEIGHT, FIGURE_WIDTH, Figure};
use crate::io::export::ExportError;

/// Font family name under which the embedded DejaVu Sans is registered.
pub(super) const FONT: &str = "sans-serif";

pub(super) type PRes<T = ()> = Result<T, String>;
pub(super) type Chart<'a, DB> = ChartContext<'a, DB, Cartesian2d<RangedCoordf64, RangedCoordf64>>;

pub(super) trait Pe<T> {
    fn pe(self) -> PRes<T>;
}
impl<T, E: std::fmt::Display> Pe<T> for Result<T, E> {
    fn pe(self) -> PRes<T> {
        self.map_err(|e| e.to_string())
    }
}

pub(super) fn ensure_font() -> Result<(), ExportError> {
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

pub(super) trait Paint {
    fn paint<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> PRes;
}

pub(super) fn render<P: Paint>(p: &P) -> Result<Figure, ExportError> {
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

pub(super) fn encode_png(rgb: &[u8], w: u32, h: u32) -> Result<Vec<u8>, ExportError> {
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

pub(super) fn font(size: f64) -> TextStyle<'static> {
    TextStyle::from((FONT, size).into_font()).color(&BLACK)
}

pub(super) fn title_font() -> TextStyle<'static> {
    TextStyle::from((FONT, 24.0).into_font().style(FontStyle::Bold)).color(&BLACK)
}

/// Tick label text: plain decimals without trailing zeros, scientific for extremes.
pub(super) fn tick_fmt(v: &f64) -> String {
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

/// Test helper: the figure is a complete SVG and a decodable PNG of the
/// figure size with something drawn.
#[cfg(test)]
pub(super) fn check_fig(f: &Figure) {
    const PNG_SIG: [u8; 8] = [0x89, b'P', b'N', b'G', 0x0D, 0x0A, 0x1A, 0x0A];
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn tick_format() {
        assert_eq!(tick_fmt(&30.0), "30");
        assert_eq!(tick_fmt(&-0.25), "-0.25");
        assert_eq!(tick_fmt(&1361.5), "1361.5");
        assert_eq!(tick_fmt(&0.0), "0");
    }
}
