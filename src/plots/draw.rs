//! Drawing machinery shared by the pictures: the backends, the bundled
//! font, text styles, colour bars, arrows, dashed lines and clipping.
//!
//! Pictures are drawn in pixel coordinates of the whole canvas (plotters'
//! `Shift` areas), with plotters' chart builder used only for axes, ticks
//! and their labels. Lines and polygons are clipped to the data area here,
//! since plotters draws elements outside a chart's range over its axes.
use super::colour::ColourMap;
use super::{prepare, Picture, PlotError, PlotFrame};
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use std::path::Path;
use std::sync::Once;

/// How a filled map is to be drawn.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Raster {
    /// One sample per pixel (PNG).
    Pixels,
    /// At most this many rectangles over the whole map (SVG).
    Blocks(usize),
}

/// What every picture implements: its size, and drawing itself on a
/// canvas of that size.
pub trait Draw {
    /// Canvas size (width, height), pixels.
    fn canvas_size(&self) -> (u32, u32);

    /// Draws on `root` (already filled white); returns the data frame
    /// where the picture has one in (r, z).
    fn draw_on<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
        raster: Raster,
    ) -> Result<Option<PlotFrame>, String>;
}

/// Turns any drawing error into its message.
pub fn de<E: std::fmt::Display>(e: E) -> String {
    e.to_string()
}

/// The font family every picture uses; the bundled Noto Sans is
/// registered under it on first use.
pub const FAMILY: &str = "sans-serif";

/// Registers the bundled font (once per process).
pub fn fonts() {
    static ONCE: Once = Once::new();
    ONCE.call_once(|| {
        // The bytes are a valid TrueType font shipped with the crate; a
        // failure here would be a broken dependency, not a user error.
        let _ = plotters::style::register_font(FAMILY, FontStyle::Normal, ttf_noto_sans::REGULAR);
    });
}

/// Draws `fig` to pixels in memory; `path` only names errors.
pub fn render<F: Draw + ?Sized>(fig: &F, path: &Path) -> Result<Picture, PlotError> {
    fonts();
    let (w, h) = fig.canvas_size();
    let mut rgb = vec![255u8; 3 * w as usize * h as usize];
    let err = |message: String| PlotError::Draw {
        path: path.to_path_buf(),
        message,
    };
    let frame = {
        let root = BitMapBackend::with_buffer(&mut rgb, (w, h)).into_drawing_area();
        root.fill(&WHITE).map_err(de).map_err(err)?;
        let frame = fig.draw_on(&root, Raster::Pixels).map_err(err)?;
        root.present().map_err(de).map_err(err)?;
        frame
    };
    Ok(Picture {
        width: w,
        height: h,
        rgb,
        frame,
    })
}

/// Most rectangles of a filled map in an SVG file: ~100 bytes each, so a
/// map stays near 0.5 MB at most.
pub const SVG_BLOCKS: usize = 5000;

/// Draws `fig` as SVG text and writes it to `path`.
pub fn write_svg<F: Draw + ?Sized>(fig: &F, path: &Path) -> Result<(), PlotError> {
    fonts();
    prepare(path)?;
    let (w, h) = fig.canvas_size();
    let err = |message: String| PlotError::Draw {
        path: path.to_path_buf(),
        message,
    };
    let mut text = String::new();
    {
        let root = SVGBackend::with_string(&mut text, (w, h)).into_drawing_area();
        root.fill(&WHITE).map_err(de).map_err(err)?;
        fig.draw_on(&root, Raster::Blocks(SVG_BLOCKS))
            .map_err(err)?;
        root.present().map_err(de).map_err(err)?;
    }
    std::fs::write(path, text).map_err(|source| PlotError::Write {
        path: path.to_path_buf(),
        source,
    })
}

/// A text style of the bundled font at `size` pixels, black, anchored at
/// its top-left corner.
pub fn text(size: f64) -> TextStyle<'static> {
    TextStyle::from((FAMILY, size).into_font())
        .color(&BLACK)
        .pos(Pos::new(HPos::Left, VPos::Top))
}

/// Measured width of `s` in the bundled font at `px` pixels.
pub fn text_width(s: &str, px: f64) -> f64 {
    fonts();
    (FAMILY, px)
        .into_font()
        .box_size(s)
        .map(|b| b.0 as f64)
        .unwrap_or(0.6 * px * s.chars().count() as f64)
}

/// `text(size)` anchored at `h`, `v`.
pub fn text_at(size: f64, h: HPos, v: VPos) -> TextStyle<'static> {
    text(size).pos(Pos::new(h, v))
}

/// An 8-bit colour as a plotters colour.
pub fn rgb(c: [u8; 3]) -> RGBColor {
    RGBColor(c[0], c[1], c[2])
}

/// Neutral greys used for metal, walls and grid lines.
pub const METAL: RGBColor = RGBColor(150, 150, 150);
/// Walls (PEC) and outlines.
pub const INK: RGBColor = RGBColor(25, 25, 25);
/// PMC walls and symmetry planes.
pub const PMC_INK: RGBColor = RGBColor(40, 90, 200);

/// A vertical colour bar in the rectangle `(x0, y0)–(x1, y1)` (t = 1 at
/// the top), with tick labels `ticks` (t, text) to its right and `label`
/// written upwards beside them.
#[allow(clippy::too_many_arguments)]
pub fn colour_bar<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    map: &ColourMap,
    (x0, y0, x1, y1): (i32, i32, i32, i32),
    ticks: &[(f64, String)],
    label: &str,
    raster: Raster,
    font: f64,
) -> Result<(), String> {
    let h = (y1 - y0).max(1);
    let steps = match raster {
        Raster::Pixels => h,
        Raster::Blocks(_) => 64.min(h),
    };
    for k in 0..steps {
        let ya = y1 - (k * h) / steps;
        let yb = y1 - ((k + 1) * h) / steps;
        let t = (k as f64 + 0.5) / steps as f64;
        root.draw(&Rectangle::new(
            [(x0, yb), (x1, ya)],
            rgb(map.at(t)).filled(),
        ))
        .map_err(de)?;
    }
    root.draw(&Rectangle::new([(x0, y0), (x1, y1)], INK.stroke_width(1)))
        .map_err(de)?;
    let mut widest = 0;
    for (t, s) in ticks {
        let y = y1 - (t * h as f64).round() as i32;
        root.draw(&PathElement::new(vec![(x1, y), (x1 + 6, y)], INK))
            .map_err(de)?;
        let style = text_at(font, HPos::Left, VPos::Center);
        root.draw_text(s, &style, (x1 + 9, y)).map_err(de)?;
        widest = widest.max(root.estimate_text_size(s, &style).map_err(de)?.0 as i32);
    }
    let style = text_at(font, HPos::Center, VPos::Top).transform(FontTransform::Rotate270);
    root.draw_text(label, &style, (x1 + 16 + widest, (y0 + y1) / 2))
        .map_err(de)?;
    Ok(())
}

/// An arrow from `tail` to `head` (pixels) with a filled head a third of
/// its length (at most 12 px), in `colour`.
pub fn arrow<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    tail: (f64, f64),
    head: (f64, f64),
    colour: RGBColor,
    width: u32,
) -> Result<(), String> {
    let (dx, dy) = (head.0 - tail.0, head.1 - tail.1);
    let len = (dx * dx + dy * dy).sqrt();
    if len < 1.0 {
        return Ok(());
    }
    let (ux, uy) = (dx / len, dy / len);
    let hl = (len / 3.0).clamp(3.0, 12.0);
    let hw = 0.45 * hl;
    let base = (head.0 - ux * hl, head.1 - uy * hl);
    let p = |x: f64, y: f64| (x.round() as i32, y.round() as i32);
    root.draw(&PathElement::new(
        vec![p(tail.0, tail.1), p(base.0, base.1)],
        colour.stroke_width(width),
    ))
    .map_err(de)?;
    root.draw(&Polygon::new(
        vec![
            p(head.0, head.1),
            p(base.0 - uy * hw, base.1 + ux * hw),
            p(base.0 + uy * hw, base.1 - ux * hw),
        ],
        colour.filled(),
    ))
    .map_err(de)?;
    Ok(())
}

/// A clipping rectangle in pixels.
#[derive(Debug, Clone, Copy)]
pub struct Clip {
    /// Left edge.
    pub x0: f64,
    /// Top edge.
    pub y0: f64,
    /// Right edge.
    pub x1: f64,
    /// Bottom edge.
    pub y1: f64,
}

impl Clip {
    /// The part of segment a–b inside the rectangle (Liang–Barsky).
    pub fn segment(&self, a: (f64, f64), b: (f64, f64)) -> Option<((f64, f64), (f64, f64))> {
        let (dx, dy) = (b.0 - a.0, b.1 - a.1);
        let (mut t0, mut t1) = (0.0f64, 1.0f64);
        for (p, q) in [
            (-dx, a.0 - self.x0),
            (dx, self.x1 - a.0),
            (-dy, a.1 - self.y0),
            (dy, self.y1 - a.1),
        ] {
            if p == 0.0 {
                if q < 0.0 {
                    return None;
                }
            } else {
                let r = q / p;
                if p < 0.0 {
                    t0 = t0.max(r);
                } else {
                    t1 = t1.min(r);
                }
            }
        }
        (t0 <= t1).then_some((
            (a.0 + t0 * dx, a.1 + t0 * dy),
            (a.0 + t1 * dx, a.1 + t1 * dy),
        ))
    }

    /// The part of a polygon inside the rectangle (Sutherland–Hodgman).
    pub fn polygon(&self, pts: &[(f64, f64)]) -> Vec<(f64, f64)> {
        let mut out: Vec<(f64, f64)> = pts.to_vec();
        type Edge = (
            fn(&Clip, (f64, f64)) -> bool,
            fn(&Clip, (f64, f64), (f64, f64)) -> (f64, f64),
        );
        let edges: [Edge; 4] = [
            (
                |c, p| p.0 >= c.x0,
                |c, a, b| {
                    let t = (c.x0 - a.0) / (b.0 - a.0);
                    (c.x0, a.1 + t * (b.1 - a.1))
                },
            ),
            (
                |c, p| p.0 <= c.x1,
                |c, a, b| {
                    let t = (c.x1 - a.0) / (b.0 - a.0);
                    (c.x1, a.1 + t * (b.1 - a.1))
                },
            ),
            (
                |c, p| p.1 >= c.y0,
                |c, a, b| {
                    let t = (c.y0 - a.1) / (b.1 - a.1);
                    (a.0 + t * (b.0 - a.0), c.y0)
                },
            ),
            (
                |c, p| p.1 <= c.y1,
                |c, a, b| {
                    let t = (c.y1 - a.1) / (b.1 - a.1);
                    (a.0 + t * (b.0 - a.0), c.y1)
                },
            ),
        ];
        for (inside, cut) in edges {
            if out.is_empty() {
                break;
            }
            let input = std::mem::take(&mut out);
            for k in 0..input.len() {
                let cur = input[k];
                let prev = input[(k + input.len() - 1) % input.len()];
                match (inside(self, prev), inside(self, cur)) {
                    (true, true) => out.push(cur),
                    (true, false) => out.push(cut(self, prev, cur)),
                    (false, true) => {
                        out.push(cut(self, prev, cur));
                        out.push(cur);
                    }
                    (false, false) => {}
                }
            }
        }
        out
    }
}

/// A polyline (pixels) clipped to `clip`, solid or dashed (dash, gap in
/// pixels).
pub fn polyline<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    pts: &[(f64, f64)],
    clip: &Clip,
    style: ShapeStyle,
    dash: Option<(u32, u32)>,
) -> Result<(), String> {
    let p = |q: (f64, f64)| (q.0.round() as i32, q.1.round() as i32);
    // Clipped pieces are joined into runs so dashes continue across
    // vertices.
    let mut runs: Vec<Vec<(i32, i32)>> = Vec::new();
    let mut last: Option<(f64, f64)> = None;
    for w in pts.windows(2) {
        if !(w[0].0.is_finite() && w[0].1.is_finite() && w[1].0.is_finite() && w[1].1.is_finite()) {
            last = None;
            continue;
        }
        if let Some((a, b)) = clip.segment(w[0], w[1]) {
            let joined = last.is_some_and(|l| (l.0 - a.0).abs() < 1e-9 && (l.1 - a.1).abs() < 1e-9);
            if !joined {
                runs.push(vec![p(a)]);
            }
            runs.last_mut().expect("a run").push(p(b));
            last = Some(b);
        } else {
            last = None;
        }
    }
    for run in runs {
        match dash {
            None => root.draw(&PathElement::new(run, style)).map_err(de)?,
            Some((d, g)) => root
                .draw(&plotters::element::DashedPathElement::new(run, d, g, style))
                .map_err(de)?,
        }
    }
    Ok(())
}

/// Nice tick values covering [a, b]: steps of 1, 2 or 5 × 10ⁿ, about
/// `count` of them.
pub fn nice_ticks(a: f64, b: f64, count: usize) -> Vec<f64> {
    let (lo, hi) = (a.min(b), a.max(b));
    if hi <= lo || hi.is_nan() || lo.is_nan() {
        return vec![lo];
    }
    let raw = (hi - lo) / count.max(1) as f64;
    let mag = 10f64.powf(raw.log10().floor());
    let step = [1.0, 2.0, 5.0, 10.0]
        .iter()
        .map(|s| s * mag)
        .find(|s| *s >= raw)
        .unwrap_or(10.0 * mag);
    let first = (lo / step - 1e-9).ceil() as i64;
    let last = (hi / step + 1e-9).floor() as i64;
    (first..=last).map(|k| k as f64 * step).collect()
}

/// A number for an axis label: as few decimals as the tick step needs,
/// and a true minus sign.
pub fn tick_label(v: f64, step: f64) -> String {
    let decimals = if step >= 1.0 {
        0
    } else {
        (-step.log10()).ceil().max(0.0) as usize
    };
    let s = format!("{:.*}", decimals, v);
    let s = if s
        .trim_start_matches('-')
        .chars()
        .all(|c| c == '0' || c == '.')
    {
        s.trim_start_matches('-').to_string()
    } else {
        s
    };
    s.replace('-', "−")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_segment_crossing_the_box_is_cut_at_its_edges() {
        let c = Clip {
            x0: 0.0,
            y0: 0.0,
            x1: 10.0,
            y1: 10.0,
        };
        let (a, b) = c.segment((-5.0, 5.0), (15.0, 5.0)).unwrap();
        assert_eq!((a, b), ((0.0, 5.0), (10.0, 5.0)));
        assert!(c.segment((-5.0, -1.0), (15.0, -1.0)).is_none());
    }

    #[test]
    fn a_polygon_is_clipped_to_the_box() {
        let c = Clip {
            x0: 0.0,
            y0: 0.0,
            x1: 10.0,
            y1: 10.0,
        };
        let p = c.polygon(&[(-5.0, 2.0), (5.0, 2.0), (5.0, 8.0), (-5.0, 8.0)]);
        // The clipped rectangle spans x 0 … 5.
        let xs: Vec<f64> = p.iter().map(|q| q.0).collect();
        assert!(xs.iter().all(|&x| (0.0..=5.0).contains(&x)));
        assert!(xs.contains(&0.0) && xs.contains(&5.0));
    }

    #[test]
    fn ticks_are_round_numbers() {
        assert_eq!(
            nice_ticks(0.0, 10.0, 5),
            vec![0.0, 2.0, 4.0, 6.0, 8.0, 10.0]
        );
        assert_eq!(tick_label(-2.0, 1.0), "−2");
        assert_eq!(tick_label(0.25, 0.05), "0.25");
        assert_eq!(tick_label(-0.0, 0.5), "0.0");
    }
}
