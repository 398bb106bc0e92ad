//! Placing text labels beside curves without overlapping each other,
//! leaving the plot, or (where possible) covering other curves.

/// A pixel box: left, top, width, height.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(super) struct PxBox {
    /// Left edge.
    pub(super) x: i32,
    /// Top edge.
    pub(super) y: i32,
    /// Width.
    pub(super) w: i32,
    /// Height.
    pub(super) h: i32,
}

impl PxBox {
    fn overlaps(&self, o: &PxBox) -> bool {
        self.x < o.x + o.w && o.x < self.x + self.w && self.y < o.y + o.h && o.y < self.y + self.h
    }

    fn contains(&self, (px, py): (i32, i32)) -> bool {
        px >= self.x && px < self.x + self.w && py >= self.y && py < self.y + self.h
    }

    fn inside(&self, area: &PxBox) -> bool {
        self.x >= area.x
            && self.y >= area.y
            && self.x + self.w <= area.x + area.w
            && self.y + self.h <= area.y + area.h
    }
}

/// A curve to label: its text, its text size and its points on screen.
#[derive(Clone, Debug)]
pub(super) struct Labelled {
    /// Text.
    pub(super) text: String,
    /// Text width and height, pixels.
    pub(super) size: (i32, i32),
    /// Polyline on screen.
    pub(super) pts: Vec<(i32, i32)>,
}

/// Curves shorter than this (pixels) get a label only when no other curve
/// carries the same text.
const LONG: f64 = 120.0;
/// Curves shorter than this get no label.
const SHORT: f64 = 25.0;
/// Gap between a curve and its label.
const GAP: i32 = 6;
/// Padding of the label box around its text.
const PAD: i32 = 3;

fn length(pts: &[(i32, i32)]) -> f64 {
    pts.windows(2)
        .map(|w| ((w[1].0 - w[0].0) as f64).hypot((w[1].1 - w[0].1) as f64))
        .sum()
}

/// The point at a fraction of the way along a polyline.
fn point_at(pts: &[(i32, i32)], f: f64) -> (i32, i32) {
    let total = length(pts);
    let mut left = total * f;
    for w in pts.windows(2) {
        let l = ((w[1].0 - w[0].0) as f64).hypot((w[1].1 - w[0].1) as f64);
        if left <= l && l > 0.0 {
            let t = left / l;
            return (
                w[0].0 + ((w[1].0 - w[0].0) as f64 * t).round() as i32,
                w[0].1 + ((w[1].1 - w[0].1) as f64 * t).round() as i32,
            );
        }
        left -= l;
    }
    pts[pts.len() - 1]
}

/// Points every few pixels along every curve, to count how much of the
/// curves a label box would hide.
fn samples(curves: &[Labelled]) -> Vec<(i32, i32)> {
    let mut out = Vec::new();
    for c in curves {
        for w in c.pts.windows(2) {
            let l = ((w[1].0 - w[0].0) as f64).hypot((w[1].1 - w[0].1) as f64);
            let n = (l / 3.0).ceil().max(1.0) as i32;
            for k in 0..n {
                let t = k as f64 / n as f64;
                out.push((
                    w[0].0 + ((w[1].0 - w[0].0) as f64 * t) as i32,
                    w[0].1 + ((w[1].1 - w[0].1) as f64 * t) as i32,
                ));
            }
        }
        if let Some(p) = c.pts.last() {
            out.push(*p);
        }
    }
    out
}

/// Choose label boxes (top-left of the text, with the box) for curves
/// inside `area`: longest curves first; each candidate sits beside a point
/// along the curve; a candidate must lie inside the area and overlap no
/// placed label; among those the one hiding the fewest curve points wins.
/// Returns, per curve, its label position if it got one.
pub(super) fn place_labels(area: PxBox, curves: &[Labelled]) -> Vec<Option<(i32, i32)>> {
    const FRACTIONS: [f64; 11] = [0.5, 0.4, 0.6, 0.3, 0.7, 0.2, 0.8, 0.1, 0.9, 0.05, 0.95];
    let dots = samples(curves);
    let mut order: Vec<usize> = (0..curves.len()).collect();
    let lengths: Vec<f64> = curves.iter().map(|c| length(&c.pts)).collect();
    order.sort_by(|&a, &b| lengths[b].total_cmp(&lengths[a]));
    let mut placed: Vec<PxBox> = Vec::new();
    let mut texts: Vec<&str> = Vec::new();
    let mut out = vec![None; curves.len()];
    for k in order {
        let c = &curves[k];
        let dup = texts.contains(&c.text.as_str());
        if c.pts.is_empty() || lengths[k] < SHORT || (dup && lengths[k] < LONG) {
            continue;
        }
        let (w, h) = (c.size.0 + 2 * PAD, c.size.1 + 2 * PAD);
        let mut best: Option<(usize, PxBox)> = None;
        for f in FRACTIONS {
            let (px, py) = point_at(&c.pts, f);
            for (dx, dy) in [
                (GAP, -h - GAP),
                (GAP, GAP),
                (-w - GAP, -h - GAP),
                (-w - GAP, GAP),
            ] {
                let b = PxBox {
                    x: px + dx,
                    y: py + dy,
                    w,
                    h,
                };
                if !b.inside(&area) || placed.iter().any(|p| p.overlaps(&b)) {
                    continue;
                }
                let hidden = dots.iter().filter(|d| b.contains(**d)).count();
                if best.is_none_or(|(s, _)| hidden < s) {
                    best = Some((hidden, b));
                }
                if hidden == 0 {
                    break;
                }
            }
            if best.is_some_and(|(s, _)| s == 0) {
                break;
            }
        }
        if let Some((_, b)) = best {
            placed.push(b);
            texts.push(&c.text);
            out[k] = Some((b.x + PAD, b.y + PAD));
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn curve(text: &str, pts: Vec<(i32, i32)>) -> Labelled {
        Labelled {
            text: text.into(),
            size: (120, 14),
            pts,
        }
    }

    #[test]
    fn labels_of_close_curves_do_not_overlap() {
        // Two almost coincident diagonals, as two boundaries meeting at a
        // cusp: both get a label, inside the area, not overlapping.
        let area = PxBox {
            x: 0,
            y: 0,
            w: 600,
            h: 400,
        };
        let a = curve("polar caps → ice-free", vec![(100, 300), (400, 100)]);
        let b = curve("ice-free → polar caps", vec![(104, 302), (404, 102)]);
        let c = curve("short", vec![(10, 10), (12, 12)]);
        let at = place_labels(area, &[a.clone(), b.clone(), c]);
        let (pa, pb) = (at[0].unwrap(), at[1].unwrap());
        let boxed = |p: (i32, i32), l: &Labelled| PxBox {
            x: p.0 - PAD,
            y: p.1 - PAD,
            w: l.size.0 + 2 * PAD,
            h: l.size.1 + 2 * PAD,
        };
        let (ba, bb) = (boxed(pa, &a), boxed(pb, &b));
        assert!(!ba.overlaps(&bb), "{ba:?} {bb:?}");
        assert!(ba.inside(&area) && bb.inside(&area));
        assert_eq!(at[2], None, "a 3 px curve gets no label");
    }

    #[test]
    fn a_repeated_short_curve_is_not_labelled_twice() {
        let area = PxBox {
            x: 0,
            y: 0,
            w: 600,
            h: 400,
        };
        let long = curve("ice-free → snowball", vec![(50, 350), (550, 300)]);
        let short = curve("ice-free → snowball", vec![(100, 100), (160, 100)]);
        let other = curve("polar caps → snowball", vec![(100, 200), (160, 200)]);
        let at = place_labels(area, &[short, long, other]);
        assert!(at[1].is_some());
        assert_eq!(at[0], None);
        assert!(
            at[2].is_some(),
            "a short curve with its own text is labelled"
        );
    }

    #[test]
    fn point_along_a_polyline() {
        let pts = [(0, 0), (100, 0), (100, 100)];
        assert_eq!(point_at(&pts, 0.5), (100, 0));
        assert_eq!(point_at(&pts, 0.25), (50, 0));
        assert_eq!(point_at(&pts, 1.0), (100, 100));
        assert_eq!(length(&pts), 200.0);
    }
}
