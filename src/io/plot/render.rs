//! Drawing backends, the embedded font, PNG encoding, text measurement and
//! wrapping, and the figure title.

use std::sync::OnceLock;

use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::{FontStyle, register_font};

use super::{FIGURE_HEIGHT, FIGURE_WIDTH, Figure, Formats};
use crate::io::export::ExportError;

/// Font family name under which the embedded DejaVu Sans is registered.
pub(super) const FONT: &str = "sans-serif";

/// Result of drawing: errors of the backend as text.
pub(super) type PRes<T = ()> = Result<T, String>;

/// Backend errors to [`PRes`].
pub(super) trait Pe<T> {
    /// Convert the error to text.
    fn pe(self) -> PRes<T>;
}
impl<T, E: std::fmt::Display> Pe<T> for Result<T, E> {
    fn pe(self) -> PRes<T> {
        self.map_err(|e| e.to_string())
    }
}

/// Register the embedded fonts once.
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

/// Something that draws a whole figure on a backend.
pub(super) trait Paint {
    /// Draw on the white root area.
    fn paint<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> PRes;
}

/// Draw a figure to SVG and/or PNG, as `formats` asks (a format not asked
/// for is left empty). With both, the two drawings run side by side
/// (rayon::join): the same bytes as one after the other.
pub(super) fn render<P: Paint + Sync>(formats: Formats, p: &P) -> Result<Figure, ExportError> {
    if !formats.any() {
        return Ok(Figure {
            svg: Vec::new(),
            png: Vec::new(),
        });
    }
    ensure_font()?;
    let (svg, png) = rayon::join(
        || {
            if formats.svg() {
                draw_svg(p)
            } else {
                Ok(Vec::new())
            }
        },
        || {
            if formats.png() {
                draw_png(p)
            } else {
                Ok(Vec::new())
            }
        },
    );
    Ok(Figure {
        svg: svg?,
        png: png?,
    })
}

fn draw_svg<P: Paint>(p: &P) -> Result<Vec<u8>, ExportError> {
    let plot_err = |what: String| ExportError::Plot { what };
    let mut svg = String::new();
    {
        let root =
            SVGBackend::with_string(&mut svg, (FIGURE_WIDTH, FIGURE_HEIGHT)).into_drawing_area();
        root.fill(&WHITE).pe().map_err(plot_err)?;
        p.paint(&root).map_err(plot_err)?;
        root.present().pe().map_err(plot_err)?;
    }
    Ok(svg.into_bytes())
}

fn draw_png<P: Paint>(p: &P) -> Result<Vec<u8>, ExportError> {
    let plot_err = |what: String| ExportError::Plot { what };
    let mut rgb = vec![255u8; (FIGURE_WIDTH * FIGURE_HEIGHT * 3) as usize];
    {
        let root =
            BitMapBackend::with_buffer(&mut rgb, (FIGURE_WIDTH, FIGURE_HEIGHT)).into_drawing_area();
        root.fill(&WHITE).pe().map_err(plot_err)?;
        p.paint(&root).map_err(plot_err)?;
        root.present().pe().map_err(plot_err)?;
    }
    encode_png(&rgb, FIGURE_WIDTH, FIGURE_HEIGHT)
}

/// Encode 8-bit RGB pixels as PNG.
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

/// Regular text of a size.
pub(super) fn font(size: f64) -> TextStyle<'static> {
    TextStyle::from((FONT, size).into_font()).color(&BLACK)
}

/// Bold text of a size.
pub(super) fn bold(size: f64) -> TextStyle<'static> {
    TextStyle::from((FONT, size).into_font().style(FontStyle::Bold)).color(&BLACK)
}

/// Width and height of a text in pixels (0 where it cannot be measured).
pub(super) fn text_size<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    text: &str,
    style: &TextStyle,
) -> (i32, i32) {
    area.estimate_text_size(text, style)
        .map(|(w, h)| (w as i32, h as i32))
        .unwrap_or((0, 0))
}

/// Break a text into lines no wider than `max_w` pixels, at spaces (a
/// single word wider than that stays whole on its own line).
pub(super) fn wrap_text<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    text: &str,
    style: &TextStyle,
    max_w: i32,
) -> Vec<String> {
    let mut lines: Vec<String> = Vec::new();
    let mut cur = String::new();
    for word in text.split(' ').filter(|w| !w.is_empty()) {
        let trial = if cur.is_empty() {
            word.to_string()
        } else {
            format!("{cur} {word}")
        };
        if cur.is_empty() || text_size(area, &trial, style).0 <= max_w {
            cur = trial;
        } else {
            lines.push(std::mem::replace(&mut cur, word.to_string()));
        }
    }
    if !cur.is_empty() || lines.is_empty() {
        lines.push(cur);
    }
    lines
}

/// Draw the title centred at the top, wrapped to the figure width (and in
/// a smaller size if it would take more than two lines), and return the
/// area below it.
pub(super) fn titled<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    title: &str,
) -> PRes<DrawingArea<DB, Shift>> {
    let (w, _) = root.dim_in_pixel();
    let max_w = w as i32 - 40;
    let mut size = 24.0;
    let mut lines = wrap_text(root, title, &bold(size), max_w);
    while lines.len() > 2 && size > 15.0 {
        size -= 2.0;
        lines = wrap_text(root, title, &bold(size), max_w);
    }
    let style = bold(size);
    let line_h = text_size(root, "Ag", &style).1 + 4;
    let mut y = 8;
    for line in &lines {
        let lw = text_size(root, line, &style).0;
        root.draw(&Text::new(
            line.clone(),
            ((w as i32 - lw) / 2, y),
            style.clone(),
        ))
        .pe()?;
        y += line_h;
    }
    Ok(root.split_vertically((y + 6) as u32).1)
}

/// Test helper: the figure is a complete SVG and a decodable PNG of the
/// figure size with something drawn.
#[cfg(test)]
pub(super) fn check_fig(f: &Figure) -> Vec<u8> {
    const PNG_SIG: [u8; 8] = [0x89, b'P', b'N', b'G', 0x0D, 0x0A, 0x1A, 0x0A];
    let s = std::str::from_utf8(&f.svg).unwrap();
    assert!(s.contains("<svg"));
    assert!(!s.contains("NaN"));
    assert_eq!(&f.png[..8], &PNG_SIG);
    let buf = decode_png(&f.png);
    // something other than white was drawn
    assert!(buf.iter().any(|&b| b < 128));
    buf
}

/// Test helper: the texts of an SVG document's `<text>` elements, trimmed.
#[cfg(test)]
pub(super) fn svg_texts(svg: &[u8]) -> Vec<String> {
    let s = String::from_utf8_lossy(svg);
    s.split("<text")
        .skip(1)
        .filter_map(|part| {
            let body = part.split_once('>')?.1;
            Some(body.split("</text>").next()?.trim().to_string())
        })
        .collect()
}

/// Test helper: the RGB pixels of a figure PNG (checks its size).
#[cfg(test)]
pub(super) fn decode_png(png_bytes: &[u8]) -> Vec<u8> {
    let dec = png::Decoder::new(png_bytes);
    let mut r = dec.read_info().unwrap();
    let mut buf = vec![0; r.output_buffer_size()];
    let info = r.next_frame(&mut buf).unwrap();
    assert_eq!((info.width, info.height), (FIGURE_WIDTH, FIGURE_HEIGHT));
    assert_eq!(info.color_type, png::ColorType::Rgb);
    buf
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn long_text_wraps_at_spaces() {
        ensure_font().unwrap();
        let mut svg = String::new();
        let root = SVGBackend::with_string(&mut svg, (400, 100)).into_drawing_area();
        let st = font(15.0);
        let text = "polar caps + snowball, with a long explanation attached";
        let lines = wrap_text(&root, text, &st, 150);
        assert!(lines.len() >= 3, "{lines:?}");
        assert_eq!(lines.join(" "), text);
        for l in &lines {
            assert!(text_size(&root, l, &st).0 <= 150 || !l.contains(' '), "{l}");
        }
        assert_eq!(wrap_text(&root, "short", &st, 150), vec!["short"]);
        assert_eq!(wrap_text(&root, "", &st, 150), vec![""]);
    }
}
