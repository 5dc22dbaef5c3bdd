//! Radiation-pattern charts from plain data: a polar cut with co- and
//! cross-polar components, and a (θ, φ) directivity map.
//!
//! These take numbers, not runs, so any far-field computation can feed
//! them. Angles in degrees, levels in dB (dBi for the map).
//!
//! **Polar cut.** θ is drawn clockwise from the top of the chart (the +z
//! direction), so θ = 90° is to the right and a negative θ to the left; a
//! full cut through the axis is θ ∈ [−180°, 180°]. The radius is the level
//! in dB: the outer ring is the largest level rounded up to a multiple of
//! 5 dB, the centre that minus [`PolarCut::with_range_db`] (default 40 dB);
//! lower levels (and −∞, a null) sit at the centre. Rings every 10 dB.
//! Points are joined in the order given.
//!
//! **Directivity map.** θ across, φ up; each sample fills the cell
//! between the midpoints to its neighbours (so uneven grids are drawn
//! true), coloured on the sequential map from the peak minus the range
//! (default 40 dB) to the peak.
use super::colour::{line_colour, ColourMap};
use super::draw::{
    colour_bar, de, nice_ticks, polyline, rgb, text, text_at, tick_label, Clip, Draw, Raster,
    FAMILY, INK,
};
use super::{PlotError, PlotFrame};
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};

fn bad(what: &str, message: String) -> PlotError {
    PlotError::Input {
        what: what.into(),
        message,
    }
}

/// NaN or +∞ is an error; −∞ (a null) is allowed.
fn check_levels(what: &str, v: &[f64]) -> Result<(), PlotError> {
    match v.iter().position(|x| x.is_nan() || *x == f64::INFINITY) {
        Some(k) => Err(bad(what, format!("value {k} is {}", v[k]))),
        None => Ok(()),
    }
}

fn check_angles(what: &str, v: &[f64]) -> Result<(), PlotError> {
    match v.iter().position(|x| !x.is_finite()) {
        Some(k) => Err(bad(what, format!("angle {k} is {}", v[k]))),
        None => Ok(()),
    }
}

/// A polar cut of a radiation pattern (see the module docs).
#[derive(Debug, Clone, PartialEq)]
pub struct PolarCut {
    theta_deg: Vec<f64>,
    co_db: Vec<f64>,
    cross_db: Vec<f64>,
    title: String,
    plane: String,
    range_db: f64,
    size: u32,
}

impl PolarCut {
    /// A cut: angles `theta_deg`, co-polar levels `co_db` and cross-polar
    /// levels `cross_db` (same length, or empty for none), a `title` and
    /// the plane's name (e.g. "E-plane (φ = 0°)"). Errors: lengths that
    /// differ, fewer than 2 points, non-finite angles, NaN or +∞ levels.
    pub fn new(
        theta_deg: &[f64],
        co_db: &[f64],
        cross_db: &[f64],
        title: &str,
        plane: &str,
    ) -> Result<PolarCut, PlotError> {
        if theta_deg.len() < 2 {
            return Err(bad(
                "theta",
                format!("{} angles; at least 2 are needed", theta_deg.len()),
            ));
        }
        if co_db.len() != theta_deg.len() {
            return Err(bad(
                "co-polar levels",
                format!("{} values for {} angles", co_db.len(), theta_deg.len()),
            ));
        }
        if !cross_db.is_empty() && cross_db.len() != theta_deg.len() {
            return Err(bad(
                "cross-polar levels",
                format!("{} values for {} angles", cross_db.len(), theta_deg.len()),
            ));
        }
        check_angles("theta", theta_deg)?;
        check_levels("co-polar levels", co_db)?;
        check_levels("cross-polar levels", cross_db)?;
        if !co_db.iter().chain(cross_db).any(|x| x.is_finite()) {
            return Err(bad("levels", "every level is −∞".into()));
        }
        Ok(PolarCut {
            theta_deg: theta_deg.to_vec(),
            co_db: co_db.to_vec(),
            cross_db: cross_db.to_vec(),
            title: title.to_string(),
            plane: plane.to_string(),
            range_db: 40.0,
            size: 760,
        })
    }

    /// Decibels between the outer ring and the centre (default 40; must be
    /// positive, else it is left unchanged).
    pub fn with_range_db(mut self, range_db: f64) -> PolarCut {
        if range_db > 0.0 && range_db.is_finite() {
            self.range_db = range_db;
        }
        self
    }

    /// Picture width, pixels (default 760, at least 420); the height is
    /// 70 px more.
    pub fn with_size(mut self, width: u32) -> PolarCut {
        self.size = width.max(420);
        self
    }

    /// The level of the outer ring, dB.
    pub fn top_db(&self) -> f64 {
        let max = self
            .co_db
            .iter()
            .chain(&self.cross_db)
            .copied()
            .filter(|x| x.is_finite())
            .fold(f64::NEG_INFINITY, f64::max);
        (max / 5.0).ceil() * 5.0
    }
}

const TOP: i32 = 96;

impl Draw for PolarCut {
    fn canvas_size(&self) -> (u32, u32) {
        (self.size, self.size + 70)
    }

    fn draw_on<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
        _raster: Raster,
    ) -> Result<Option<PlotFrame>, String> {
        let w = self.size as i32;
        root.draw_text(&self.title, &text(24.0), (12, 10))
            .map_err(de)?;
        root.draw_text(&self.plane, &text(18.0), (12, 42))
            .map_err(de)?;
        let radius = (w as f64 / 2.0 - 62.0).max(100.0);
        let (cx, cy) = (w as f64 / 2.0, TOP as f64 + 30.0 + radius);
        let top = self.top_db();
        let floor = top - self.range_db;
        let rho = |db: f64| {
            if db.is_finite() {
                radius * ((db - floor) / self.range_db).clamp(0.0, 1.0)
            } else {
                0.0
            }
        };
        let at = |th_deg: f64, r: f64| {
            let t = th_deg.to_radians();
            (cx + r * t.sin(), cy - r * t.cos())
        };
        let everywhere = Clip {
            x0: -1e9,
            y0: -1e9,
            x1: 1e9,
            y1: 1e9,
        };
        let grid = RGBColor(200, 200, 200);
        // Rings every 10 dB (and the outer one).
        let mut levels = vec![top];
        let mut l = top - 10.0;
        while l > floor + 1e-9 {
            levels.push(l);
            l -= 10.0;
        }
        for &lv in &levels {
            let r = rho(lv);
            let ring: Vec<(f64, f64)> = (0..=180).map(|k| at(2.0 * k as f64, r)).collect();
            let c = if lv == top { INK } else { grid };
            polyline(root, &ring, &everywhere, c.stroke_width(1), None)?;
        }
        // Spokes every 30°, labelled outside the outer ring.
        for k in 0..12 {
            let th = 30.0 * k as f64;
            polyline(
                root,
                &[at(th, 0.0), at(th, radius)],
                &everywhere,
                grid.stroke_width(1),
                None,
            )?;
            let shown = if th > 180.0 { th - 360.0 } else { th };
            let (lx, ly) = at(th, radius + 22.0);
            root.draw_text(
                &format!("{}°", tick_label(shown, 1.0)),
                &text_at(16.0, HPos::Center, VPos::Center),
                (lx.round() as i32, ly.round() as i32),
            )
            .map_err(de)?;
        }
        // Ring levels along the 15° line, on a white patch.
        for &lv in &levels {
            let (x, y) = at(15.0, rho(lv));
            let s = format!("{} dB", tick_label(lv, 1.0));
            let style = text_at(14.0, HPos::Left, VPos::Center);
            let (tw, th) = root.estimate_text_size(&s, &style).map_err(de)?;
            let (x, y) = (x.round() as i32 + 3, y.round() as i32);
            root.draw(&Rectangle::new(
                [
                    (x - 2, y - th as i32 / 2 - 1),
                    (x + tw as i32 + 2, y + th as i32 / 2 + 1),
                ],
                WHITE.mix(0.85).filled(),
            ))
            .map_err(de)?;
            root.draw_text(&s, &style, (x, y)).map_err(de)?;
        }
        root.draw_text(
            &format!("radius: level, {} dB at the centre", tick_label(floor, 1.0)),
            &text(15.0),
            (12, 68),
        )
        .map_err(de)?;
        // The data.
        let co: Vec<(f64, f64)> = self
            .theta_deg
            .iter()
            .zip(&self.co_db)
            .map(|(&t, &d)| at(t, rho(d)))
            .collect();
        polyline(
            root,
            &co,
            &everywhere,
            rgb(line_colour(0)).stroke_width(3),
            None,
        )?;
        if !self.cross_db.is_empty() {
            let cr: Vec<(f64, f64)> = self
                .theta_deg
                .iter()
                .zip(&self.cross_db)
                .map(|(&t, &d)| at(t, rho(d)))
                .collect();
            polyline(
                root,
                &cr,
                &everywhere,
                rgb(line_colour(1)).stroke_width(3),
                Some((10, 6)),
            )?;
        }
        // Legend, top right.
        let lx = w - 200;
        let mut ly = 16;
        let mut items = vec![("co-polar", 0, None)];
        if !self.cross_db.is_empty() {
            items.push(("cross-polar", 1, Some((10u32, 6u32))));
        }
        for (name, k, dash) in items {
            polyline(
                root,
                &[
                    (lx as f64, ly as f64 + 9.0),
                    (lx as f64 + 40.0, ly as f64 + 9.0),
                ],
                &everywhere,
                rgb(line_colour(k)).stroke_width(3),
                dash,
            )?;
            root.draw_text(
                name,
                &text_at(17.0, HPos::Left, VPos::Center),
                (lx + 48, ly + 9),
            )
            .map_err(de)?;
            ly += 26;
        }
        Ok(None)
    }
}

/// A directivity map over (θ, φ) (see the module docs).
#[derive(Debug, Clone, PartialEq)]
pub struct DirectivityMap {
    theta_deg: Vec<f64>,
    phi_deg: Vec<f64>,
    dbi: Vec<Vec<f64>>,
    title: String,
    range_db: f64,
    size: (u32, u32),
    peak: (f64, usize, usize),
}

impl DirectivityMap {
    /// A map of `dbi[i][k]` at θ = `theta_deg[i]`, φ = `phi_deg[k]` (both
    /// strictly increasing), with `title`. Errors: shapes that do not
    /// match, fewer than 2 angles either way, angles not increasing, NaN or
    /// +∞ values, or no finite value.
    pub fn new(
        theta_deg: &[f64],
        phi_deg: &[f64],
        dbi: &[Vec<f64>],
        title: &str,
    ) -> Result<DirectivityMap, PlotError> {
        for (name, v) in [("theta", theta_deg), ("phi", phi_deg)] {
            if v.len() < 2 {
                return Err(bad(
                    name,
                    format!("{} angles; at least 2 are needed", v.len()),
                ));
            }
            check_angles(name, v)?;
            if let Some(k) = v.windows(2).position(|w| w[1] <= w[0]) {
                return Err(bad(
                    name,
                    format!(
                        "angles must increase; {}° is followed by {}°",
                        v[k],
                        v[k + 1]
                    ),
                ));
            }
        }
        if dbi.len() != theta_deg.len() {
            return Err(bad(
                "directivity",
                format!("{} rows for {} θ values", dbi.len(), theta_deg.len()),
            ));
        }
        let mut peak = (f64::NEG_INFINITY, 0, 0);
        for (i, row) in dbi.iter().enumerate() {
            if row.len() != phi_deg.len() {
                return Err(bad(
                    "directivity",
                    format!(
                        "row {i} has {} values for {} φ values",
                        row.len(),
                        phi_deg.len()
                    ),
                ));
            }
            check_levels(&format!("directivity row {i}"), row)?;
            for (k, &v) in row.iter().enumerate() {
                if v > peak.0 {
                    peak = (v, i, k);
                }
            }
        }
        if !peak.0.is_finite() {
            return Err(bad("directivity", "every value is −∞".into()));
        }
        Ok(DirectivityMap {
            theta_deg: theta_deg.to_vec(),
            phi_deg: phi_deg.to_vec(),
            dbi: dbi.to_vec(),
            title: title.to_string(),
            range_db: 40.0,
            size: (900, 560),
            peak,
        })
    }

    /// Decibels below the peak where the colours end (default 40; must be
    /// positive, else it is left unchanged).
    pub fn with_range_db(mut self, range_db: f64) -> DirectivityMap {
        if range_db > 0.0 && range_db.is_finite() {
            self.range_db = range_db;
        }
        self
    }

    /// Picture size, pixels (default 900 × 560, at least 480 × 320).
    pub fn with_size(mut self, size: (u32, u32)) -> DirectivityMap {
        self.size = (size.0.max(480), size.1.max(320));
        self
    }

    /// Index of the sample whose cell holds `v` (cells end half-way
    /// between samples).
    fn cell(grid: &[f64], v: f64) -> usize {
        let k = grid.partition_point(|&g| g < v);
        if k == 0 {
            0
        } else if k >= grid.len() {
            grid.len() - 1
        } else if v - grid[k - 1] < grid[k] - v {
            k - 1
        } else {
            k
        }
    }
}

impl Draw for DirectivityMap {
    fn canvas_size(&self) -> (u32, u32) {
        self.size
    }

    fn draw_on<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
        raster: Raster,
    ) -> Result<Option<PlotFrame>, String> {
        let (w, _) = self.size;
        root.draw_text(&self.title, &text(24.0), (12, 10))
            .map_err(de)?;
        let (pk, pi, pk_phi) = self.peak;
        root.draw_text(
            &format!(
                "directivity, peak {} dBi at θ = {}°, φ = {}°",
                tick_label(pk, 0.01),
                tick_label(self.theta_deg[pi], 0.1),
                tick_label(self.phi_deg[pk_phi], 0.1)
            ),
            &text(17.0),
            (12, 42),
        )
        .map_err(de)?;
        let (_, rest) = root.split_vertically(72);
        let panel = 150;
        let (area, _) = rest.split_horizontally(w - panel);
        let th = &self.theta_deg;
        let ph = &self.phi_deg;
        let edge = |v: &[f64]| {
            let n = v.len();
            (
                v[0] - 0.5 * (v[1] - v[0]),
                v[n - 1] + 0.5 * (v[n - 1] - v[n - 2]),
            )
        };
        let (t0, t1) = edge(th);
        let (p0, p1) = edge(ph);
        let mut chart = ChartBuilder::on(&area)
            .margin(10)
            .margin_right(18)
            .x_label_area_size(56)
            .y_label_area_size(70)
            .build_cartesian_2d(t0..t1, p0..p1)
            .map_err(de)?;
        let tt = nice_ticks(t0, t1, 8);
        let pt = nice_ticks(p0, p1, 8);
        let ts = if tt.len() > 1 { tt[1] - tt[0] } else { 1.0 };
        let ps = if pt.len() > 1 { pt[1] - pt[0] } else { 1.0 };
        let tf = |v: &f64| tick_label(*v, ts);
        let pf = |v: &f64| tick_label(*v, ps);
        chart
            .configure_mesh()
            .disable_mesh()
            .x_labels(tt.len().max(2))
            .y_labels(pt.len().max(2))
            .x_label_formatter(&tf)
            .y_label_formatter(&pf)
            .x_desc("θ (degrees)")
            .y_desc("φ (degrees)")
            .label_style((FAMILY, 17.0))
            .axis_desc_style((FAMILY, 19.0))
            .draw()
            .map_err(de)?;
        let (left, bottom) = chart.backend_coord(&(t0, p0));
        let (right, top) = chart.backend_coord(&(t1, p1));
        let frame = PlotFrame {
            left,
            right,
            top,
            bottom,
            x_mm: (t0, t1),
            z_mm: (p0, p1),
        };
        let map = ColourMap::sequential();
        let lo = pk - self.range_db;
        let colour = |px: f64, py: f64| {
            let u = (px - left as f64) / (right - left) as f64;
            let v = (bottom as f64 - py) / (bottom - top) as f64;
            let t = t0 + u * (t1 - t0);
            let p = p0 + v * (p1 - p0);
            let d = self.dbi[Self::cell(th, t)][Self::cell(ph, p)];
            rgb(map.at(if d.is_finite() {
                (d - lo) / self.range_db
            } else {
                0.0
            }))
        };
        match raster {
            Raster::Pixels => {
                for py in top..=bottom {
                    for px in left..=right {
                        root.draw_pixel((px, py), &colour(px as f64, py as f64))
                            .map_err(de)?;
                    }
                }
            }
            Raster::Blocks(n) => {
                let (pw, phh) = ((right - left) as f64, (bottom - top) as f64);
                // One block per sample when that fits, else a coarser
                // block grid sampled at block centres.
                let (nx, ny) = if th.len() * ph.len() <= n {
                    (th.len(), ph.len())
                } else {
                    let nx = ((n as f64 * pw / phh).sqrt().floor() as usize).clamp(1, n);
                    (nx, (n / nx).max(1))
                };
                for by in 0..ny {
                    let ya = top + ((by as f64 * phh) / ny as f64).round() as i32;
                    let yb = top + (((by + 1) as f64 * phh) / ny as f64).round() as i32;
                    for bx in 0..nx {
                        let xa = left + ((bx as f64 * pw) / nx as f64).round() as i32;
                        let xb = left + (((bx + 1) as f64 * pw) / nx as f64).round() as i32;
                        let c = colour(0.5 * (xa + xb) as f64, 0.5 * (ya + yb) as f64);
                        root.draw(&Rectangle::new([(xa, ya), (xb, yb)], c.filled()))
                            .map_err(de)?;
                    }
                }
            }
        }
        root.draw(&Rectangle::new(
            [(left, top), (right, bottom)],
            INK.stroke_width(1),
        ))
        .map_err(de)?;
        let bt = nice_ticks(lo, pk, 5);
        let bs = if bt.len() > 1 { bt[1] - bt[0] } else { 1.0 };
        let ticks: Vec<(f64, String)> = bt
            .iter()
            .map(|&v| ((v - lo) / self.range_db, tick_label(v, bs)))
            .collect();
        let bx = (w - panel) as i32 + 16;
        colour_bar(
            root,
            &map,
            (bx, top, bx + 24, bottom),
            &ticks,
            "directivity (dBi)",
            raster,
            17.0,
        )?;
        Ok(Some(frame))
    }
}
