//! The field map of one mode over the (r, z) half-plane.
//!
//! # What a map shows
//! - **Colour**: an amplitude envelope of E (or H) chosen by [`Shown`],
//!   interpolated bilinearly from the cell centres ([`CentredField`]) to
//!   every pixel and divided by its largest value in the physical region
//!   (absorber cells excluded), on the sequential map of [`ColourMap`].
//!   For m ≥ 1 the default, [`Shown::Total`], includes E_φ, which is often
//!   the main component there.
//! - **Arrows**: the in-plane field (E_r, E_z) — or (H_r, H_z) with
//!   [`MapOptions::field`] = [`FieldKind::Magnetic`] — at the phase ωt
//!   where it is strongest ([`CentredField::strongest_phase`]), sampled on
//!   a coarse square lattice of pixels, length proportional to the local
//!   field: 85 % of the lattice spacing for the larger of the in-plane
//!   maximum and a fifth of the maximum of the total envelope (so a field
//!   that is nearly all E_φ gets short arrows, not inflated ones); arrows
//!   shorter than 4 % of that are left out, and none are drawn when the
//!   in-plane field stays below 1 % of the total (a TE mode at m = 0), nor
//!   at lattice points inside metal. Each arrow is black or white, whichever stands out from the colour
//!   beneath it (Oklab L above or below 0.6).
//! - **Bodies**: dielectrics as a cased line (white on black), metal (PEC)
//!   filled grey; edges on the axis are not drawn (they are not surfaces).
//! - **Walls**: PEC walls as a thick dark line, PMC walls dashed blue; a
//!   symmetry plane that was unfolded as a thin dashed line. The PEC that
//!   terminates an absorber is not drawn.
//! - **Absorbers**: cropped by default (the map covers the physical region
//!   only, and the legend says so); [`AbsorberView::Shade`] shows the whole
//!   grid with the absorber cells washed out (blended 60 % towards white).
//! - Axes in mm with equal scales on both axes — unless that would make
//!   the data area less than 200 px high (a region flatter than about
//!   3 : 1 at the default width) — a colour bar, and a title with the
//!   mode's label, m, f in GHz and Q (or its lower bound). A region taller
//!   than the data area's 1400 px cap makes the picture narrower instead.
//!
//! With [`MapOptions::mirror`] the map spans −r … r: the cross-section
//! through the axis. The colour envelope is mirrored as it is; arrows on
//! the left half are the field at the opposite azimuth, whose in-plane
//! Cartesian components are (−(−1)^m U_r, (−1)^m U_z) from the cos mφ /
//! sin mφ dependence.
//!
//! A run solved over a symmetry plane ([`ModeScene::plane`]) covers only
//! z ≥ the plane; with [`MapOptions::unfold`] (default) its mirror image is
//! added below ([`CentredField::unfold`]), so the map shows the whole
//! structure.
//!
//! The animation of one period is in [`super::Animation`].
use super::colour::{rgb8_to_oklab, ColourMap};
use super::draw::{
    arrow, colour_bar, de, nice_ticks, polyline, rgb, text, text_at, text_width, tick_label, Clip,
    Draw, Raster, FAMILY, INK, METAL, PMC_INK,
};
use super::field::{CentredField, FieldKind, Lattice, Shown};
use super::scene::ModeScene;
use super::{Figure, PlotError, PlotFrame};
use lathe_mesh::{Component, Material, Shape};
use lathe_solver::{Mode, OuterWall, ZWall};
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};

/// How absorber (PML) cells appear in a map.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum AbsorberView {
    /// Leave them out: the map covers the physical region only.
    Crop,
    /// Show the whole grid with the absorber cells washed out.
    Shade,
}

/// Options of a field map (and of each animation frame).
#[derive(Debug, Clone, PartialEq)]
pub struct MapOptions {
    /// E (default) or H, for both colour and arrows.
    pub field: FieldKind,
    /// What sets the colour (default [`Shown::Total`]).
    pub shown: Shown,
    /// Draw arrows of the in-plane field (default true).
    pub arrows: bool,
    /// Spacing of the arrow lattice, pixels (default 34).
    pub arrow_spacing_px: u32,
    /// Show the full cross-section −r … r (default false).
    pub mirror: bool,
    /// Unfold a half solved over a symmetry plane (default true).
    pub unfold: bool,
    /// Crop (default) or shade the absorber.
    pub absorber: AbsorberView,
    /// Picture width, pixels (default 900, at least 480). The height
    /// follows from the region's aspect ratio (data area at most 1400 px
    /// high; a taller region makes the picture narrower instead).
    pub width: u32,
    /// Most rectangles of the filled map in an SVG file (default 5000).
    pub svg_blocks: usize,
}

impl Default for MapOptions {
    fn default() -> Self {
        MapOptions {
            field: FieldKind::Electric,
            shown: Shown::Total,
            arrows: true,
            arrow_spacing_px: 34,
            mirror: false,
            unfold: true,
            absorber: AbsorberView::Crop,
            width: 900,
            svg_blocks: super::draw::SVG_BLOCKS,
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq)]
enum WallKind {
    Pec,
    Pmc,
    Plane(bool),
}

#[derive(Debug, Clone, PartialEq)]
struct WallLine {
    a: (f64, f64),
    b: (f64, f64),
    kind: WallKind,
}

#[derive(Debug, Clone, PartialEq)]
struct Outline {
    /// Vertices (x, z), m; closed.
    pts: Vec<(f64, f64)>,
    metal: bool,
}

#[derive(Debug, Clone, PartialEq)]
pub(super) struct Arrows {
    pub(super) vr: Vec<f64>,
    pub(super) vz: Vec<f64>,
    pub(super) scale: f64,
}

#[derive(Debug, Clone, Copy, PartialEq)]
enum Legend {
    PecWall,
    PmcWall,
    Plane(bool),
    Metal,
    Dielectric,
    Absorber,
    Cropped,
}

impl Legend {
    fn text(self) -> &'static str {
        match self {
            Legend::PecWall => "PEC wall",
            Legend::PmcWall => "PMC wall",
            Legend::Plane(true) => "symmetry plane (PEC)",
            Legend::Plane(false) => "symmetry plane (PMC)",
            Legend::Metal => "metal",
            Legend::Dielectric => "dielectric",
            Legend::Absorber => "absorber (PML)",
            Legend::Cropped => "absorber cropped",
        }
    }
}

/// A quantity whose largest value is below this fraction of the total
/// envelope's is taken to be zero (round-off and leakage of other modes
/// into the running transform), and not drawn.
pub(super) const NEGLIGIBLE: f64 = 1e-6;

/// Arrows are drawn only when the in-plane field reaches this fraction of
/// the total envelope somewhere.
pub(super) const ARROW_FLOOR: f64 = 0.01;
/// Arrow lengths are relative to the larger of the in-plane maximum and
/// this fraction of the total envelope's maximum, so a field that is
/// nearly all azimuthal gets short arrows rather than inflated ones.
pub(super) const ARROW_SHARE: f64 = 0.2;

const TITLE_PX: f64 = 24.0;
pub(super) const SUB_PX: f64 = 17.0;
const LEGEND_PX: f64 = 16.0;
const TICK_PX: f64 = 17.0;
const DESC_PX: f64 = 19.0;
const BAR_PANEL: u32 = 150;
const Y_LABELS: u32 = 76;
const X_LABELS: u32 = 58;
const MARGIN: u32 = 8;
const RIGHT_MARGIN: u32 = 18;
const MAX_PLOT_H: f64 = 1400.0;
const MIN_PLOT: f64 = 200.0;

/// A field map of one mode, ready to draw (see the module docs).
#[derive(Debug, Clone, PartialEq)]
pub struct FieldMap {
    lat: Lattice,
    pub(super) values: Vec<f64>,
    pub(super) signed: bool,
    pub(super) left_sign: f64,
    pub(super) map: ColourMap,
    pub(super) arrows: Option<Arrows>,
    arrow_left: (f64, f64),
    mirror: bool,
    view: (f64, f64, f64, f64),
    shade: Vec<(f64, f64, f64, f64)>,
    walls: Vec<WallLine>,
    outlines: Vec<Outline>,
    title: String,
    pub(super) subtitle: String,
    pub(super) bar_label: String,
    pub(super) bar_ticks: Vec<(f64, String)>,
    legend: Vec<Legend>,
    legend_rows: usize,
    pub(super) width: u32,
    plot_h: u32,
    pub(super) min_sub_lines: usize,
    arrow_spacing: u32,
    svg_blocks: usize,
}

/// The common part of a map and of animation frames.
pub(super) struct Base {
    pub(super) map: FieldMap,
    pub(super) cf: CentredField,
    pub(super) inside: Vec<bool>,
    pub(super) kind: FieldKind,
}

impl FieldMap {
    /// The map of `scene`'s mode with `opts`. Errors: a field that is
    /// zero in what `opts.shown` selects (e.g. |E_φ| of an m = 0 TM mode),
    /// or a symmetry plane that is not the run's bottom wall.
    pub fn new(scene: &ModeScene, opts: &MapOptions) -> Result<FieldMap, PlotError> {
        let Base {
            mut map,
            cf,
            inside,
            kind,
        } = base(scene, opts)?;
        let amp = cf.amplitude(kind, opts.shown);
        let peak = max_inside(&amp, &inside);
        let total = max_inside(&cf.amplitude(kind, Shown::Total), &inside);
        if !(peak > NEGLIGIBLE * total && peak.is_finite()) {
            return Err(PlotError::Input {
                what: "field map".into(),
                message: format!(
                    "{} is zero (below {NEGLIGIBLE:e} of the total) everywhere for {}; choose another quantity",
                    opts.shown.describe(kind),
                    mode_name(scene.mode)
                ),
            });
        }
        map.values = amp.iter().map(|a| (a / peak).min(1.0)).collect();
        map.signed = false;
        map.left_sign = 1.0;
        map.map = ColourMap::sequential();
        let mut sub = format!("colour: {}, relative to its max", opts.shown.describe(kind));
        if opts.arrows {
            let [cr, _, cz] = kind.components();
            let in_plane = max_inside(&cf.amplitude(kind, Shown::InPlane), &inside);
            let total = max_inside(&cf.amplitude(kind, Shown::Total), &inside);
            let f = kind.symbol();
            if in_plane >= ARROW_FLOOR * total {
                let psi = cf.strongest_phase(kind, |i, j| inside[i * cf.nz + j]);
                let vr = cf.real_at(cr, psi);
                let vz = cf.real_at(cz, psi);
                let mag: Vec<f64> = vr.iter().zip(&vz).map(|(a, b)| a.hypot(*b)).collect();
                let scale = max_inside(&mag, &inside).max(ARROW_SHARE * total);
                map.arrows = Some(Arrows { vr, vz, scale });
                sub += &format!(
                    "  ·  arrows: ({f}r, {f}z) at ωt = {:.0}°",
                    psi.to_degrees().rem_euclid(360.0)
                );
            } else {
                sub += &format!("  ·  in-plane {f} below 1 % of |{f}|: no arrows");
            }
        }
        map.subtitle = sub + &map.subtitle;
        map.bar_label = match opts.shown {
            Shown::Total => format!("|{}| / max", kind.symbol()),
            Shown::InPlane => format!("|{}| in plane / max", kind.symbol()),
            Shown::Azimuthal => format!("|{}φ| / max", kind.symbol()),
        };
        map.bar_ticks = (0..=5)
            .map(|k| (k as f64 / 5.0, format!("{:.1}", k as f64 / 5.0)))
            .collect();
        Ok(map)
    }

    /// Where the data area lies and its coordinates (also in the
    /// [`super::Picture`] that [`Figure::render`] returns).
    pub fn frame(&self) -> Result<PlotFrame, PlotError> {
        self.render()?.frame.ok_or_else(|| PlotError::Input {
            what: "field map".into(),
            message: "no data area".into(),
        })
    }

    /// The arrows as drawn: (x, z) of each arrow's centre and its in-plane
    /// field (F_x, F_z) relative to the largest, in mm and units of the
    /// largest, for a data area of `frame`. Empty without arrows.
    pub fn arrows(&self, frame: &PlotFrame) -> Vec<((f64, f64), (f64, f64))> {
        let Some(a) = &self.arrows else {
            return Vec::new();
        };
        if a.scale.is_nan() || a.scale <= 0.0 {
            return Vec::new();
        }
        let s = self.arrow_spacing.max(8) as i32;
        let mut out = Vec::new();
        let mut py = frame.top + s / 2;
        while py <= frame.bottom - s / 4 {
            let mut px = frame.left + s / 2;
            while px <= frame.right - s / 4 {
                let (x, z) = frame.coords_of(px, py);
                let (x, z) = (x * 1e-3, z * 1e-3);
                let r = x.abs();
                let (mut fx, mut fz) = (
                    self.lat.sample(&a.vr, r, z) / a.scale,
                    self.lat.sample(&a.vz, r, z) / a.scale,
                );
                if x < 0.0 {
                    fx *= self.arrow_left.0;
                    fz *= self.arrow_left.1;
                }
                if fx.hypot(fz) >= 0.04 && !self.in_metal(x, z) {
                    out.push(((x * 1e3, z * 1e3), (fx, fz)));
                }
                px += s;
            }
            py += s;
        }
        out
    }

    fn in_absorber(&self, x: f64, z: f64) -> bool {
        let r = x.abs();
        self.shade
            .iter()
            .any(|&(r0, r1, za, zb)| r >= r0 && r <= r1 && z >= za && z <= zb)
    }

    fn in_metal(&self, x: f64, z: f64) -> bool {
        self.outlines
            .iter()
            .any(|o| o.metal && point_in_polygon(&o.pts, x, z))
    }

    /// The colour-map value (t in 0 … 1) at (x, z), m.
    fn t_at(&self, x: f64, z: f64) -> f64 {
        let v = self.lat.sample(&self.values, x.abs(), z);
        if self.signed {
            let v = if x < 0.0 { v * self.left_sign } else { v };
            0.5 * (v + 1.0)
        } else {
            v
        }
    }
}

pub(super) fn max_inside(v: &[f64], inside: &[bool]) -> f64 {
    v.iter()
        .zip(inside)
        .filter(|(_, &i)| i)
        .map(|(x, _)| *x)
        .fold(0.0, f64::max)
}

/// "TM01δ" or "m = 1 mode" when unlabelled.
pub(super) fn mode_name(mode: &Mode) -> String {
    if mode.label.is_empty() {
        format!("the m = {} mode at {:.4} GHz", mode.m, mode.freq_hz / 1e9)
    } else {
        mode.label.clone()
    }
}

/// Q for a title: "Q = 812.4", "Q = 3.41 × 10⁵", "Q > 2.0 × 10⁹".
pub(crate) fn q_text(mode: &Mode) -> String {
    let q = mode.q;
    let v = if !q.is_finite() {
        "∞".to_string()
    } else if q < 1e4 {
        let d = if q < 10.0 {
            3
        } else if q < 100.0 {
            2
        } else if q < 1000.0 {
            1
        } else {
            0
        };
        format!("{q:.d$}")
    } else {
        let e = q.log10().floor() as i32;
        let mant = q / 10f64.powi(e);
        format!("{mant:.2} × 10{}", superscript(e))
    };
    if mode.q_is_lower_bound {
        format!("Q > {v}")
    } else {
        format!("Q = {v}")
    }
}

fn superscript(e: i32) -> String {
    e.to_string()
        .chars()
        .map(|c| match c {
            '-' => '⁻',
            '0' => '⁰',
            '1' => '¹',
            '2' => '²',
            '3' => '³',
            '4' => '⁴',
            '5' => '⁵',
            '6' => '⁶',
            '7' => '⁷',
            '8' => '⁸',
            _ => '⁹',
        })
        .collect()
}

fn point_in_polygon(pts: &[(f64, f64)], x: f64, z: f64) -> bool {
    let mut inside = false;
    let n = pts.len();
    for k in 0..n {
        let (a, b) = (pts[k], pts[(k + 1) % n]);
        if (a.1 > z) != (b.1 > z) {
            let xc = a.0 + (z - a.1) / (b.1 - a.1) * (b.0 - a.0);
            if x < xc {
                inside = !inside;
            }
        }
    }
    inside
}

/// The (r, z) outline of a shape: its profile, or a half circle for a
/// sphere (96 chords).
fn outline(shape: &Shape) -> Vec<(f64, f64)> {
    match *shape {
        Shape::Sphere { radius, center } => (0..=96)
            .map(|k| {
                let a = -std::f64::consts::FRAC_PI_2 + std::f64::consts::PI * k as f64 / 96.0;
                (radius * a.cos(), center + radius * a.sin())
            })
            .collect(),
        _ => shape.profile(),
    }
}

const LEGEND_GLYPH: f64 = 28.0;
const LEGEND_GAP: f64 = 24.0;

fn legend_rows(items: &[Legend], width: f64) -> usize {
    let mut rows = 1;
    let mut x = 12.0;
    for it in items {
        let w = LEGEND_GLYPH + 8.0 + text_width(it.text(), LEGEND_PX);
        if x + w > width - 12.0 && x > 12.0 {
            rows += 1;
            x = 12.0;
        }
        x += w + LEGEND_GAP;
    }
    rows
}

/// Height of the header: title, `lines` of subtitle, `rows` of legend.
fn top_height(lines: usize, rows: usize) -> u32 {
    legend_top(lines) as u32 + 24 * rows as u32 + 6
}

/// Top of the legend's first row under `lines` of subtitle.
fn legend_top(lines: usize) -> f64 {
    56.0 + 22.0 * lines as f64
}

/// `s` broken at its " · " separators into lines that fit `width` px.
pub(super) fn wrap(s: &str, px: f64, width: f64) -> Vec<String> {
    let mut lines: Vec<String> = Vec::new();
    for part in s.split("  ·  ") {
        match lines.last_mut() {
            Some(l) if text_width(&format!("{l}  ·  {part}"), px) <= width => {
                l.push_str("  ·  ");
                l.push_str(part);
            }
            _ => lines.push(part.to_string()),
        }
    }
    lines
}

pub(super) fn base(scene: &ModeScene, opts: &MapOptions) -> Result<Base, PlotError> {
    let m = scene.mode.m;
    let g = scene.grid;
    for (c, v) in Component::ALL.iter().zip(&scene.field.components) {
        if let Some(k) = v
            .iter()
            .position(|x| !(x.re.is_finite() && x.im.is_finite()))
        {
            return Err(PlotError::Input {
                what: "mode field".into(),
                message: format!(
                    "{} of {} is {} at node {k}; nothing to draw",
                    c.name(),
                    mode_name(scene.mode),
                    v[k]
                ),
            });
        }
    }
    let mut cf = CentredField::new(g, scene.field, m);
    let (rp, mut zlo, zhi) = scene.physical();
    let mut unfolded = None;
    if let (Some(plane), true) = (scene.plane, opts.unfold) {
        if scene.walls.bottom != plane {
            return Err(PlotError::Input {
                what: "symmetry plane".into(),
                message: format!(
                    "the run's bottom wall is {}, not the {} plane given",
                    scene.walls.bottom.name(),
                    plane.name()
                ),
            });
        }
        cf = cf.unfold(plane)?;
        zlo = 2.0 * g.z0 - zhi;
        unfolded = Some(plane == ZWall::Pec);
    }
    let crop = opts.absorber == AbsorberView::Crop;
    let (r_view, z0v, z1v) = if crop {
        (rp, zlo, zhi)
    } else {
        (g.radius(), cf.z0, cf.z0 + cf.nz as f64 * cf.dz)
    };
    let x0v = if opts.mirror { -r_view } else { 0.0 };
    let view = (x0v, r_view, z0v, z1v);
    let eps = 1e-9 * (g.dr + g.dz);
    let inside: Vec<bool> = (0..cf.nr)
        .flat_map(|i| (0..cf.nz).map(move |j| (i, j)))
        .map(|(i, j)| {
            let (r, z) = cf.centre(i, j);
            r < rp + eps && z > zlo - eps && z < zhi + eps
        })
        .collect();

    // Absorber shading, walls, outlines.
    let (o, b, t) = scene.absorber_cells();
    let mut shade = Vec::new();
    if !crop {
        let (za, zb) = (cf.z0, cf.z0 + cf.nz as f64 * cf.dz);
        if o > 0 {
            shade.push((rp, g.radius(), za, zb));
        }
        if b > 0 && unfolded.is_none() {
            shade.push((0.0, rp, g.z0, zlo));
        }
        if t > 0 {
            shade.push((0.0, rp, zhi, g.z_top()));
            if unfolded.is_some() {
                shade.push((0.0, rp, za, zlo));
            }
        }
    }
    let mut walls = Vec::new();
    let (xa, xb) = (view.0, view.1);
    let hline = |z: f64, kind| WallLine {
        a: (xa, z),
        b: (xb, z),
        kind,
    };
    if scene.walls.outer == OuterWall::Pec {
        walls.push(WallLine {
            a: (g.radius(), z0v),
            b: (g.radius(), z1v),
            kind: WallKind::Pec,
        });
        if opts.mirror {
            walls.push(WallLine {
                a: (-g.radius(), z0v),
                b: (-g.radius(), z1v),
                kind: WallKind::Pec,
            });
        }
    }
    let zkind = |w: ZWall| match w {
        ZWall::Pec => Some(WallKind::Pec),
        ZWall::Pmc => Some(WallKind::Pmc),
        ZWall::Pml(_) => None,
    };
    match unfolded {
        Some(pec) => walls.push(hline(g.z0, WallKind::Plane(pec))),
        None => {
            if let Some(k) = zkind(scene.walls.bottom) {
                walls.push(hline(g.z0, k));
            }
        }
    }
    if let Some(k) = zkind(scene.walls.top) {
        walls.push(hline(g.z_top(), k));
        if unfolded.is_some() {
            walls.push(hline(2.0 * g.z0 - g.z_top(), k));
        }
    }
    let mut outlines = Vec::new();
    for body in scene.bodies {
        let pts = outline(&body.shape);
        if pts.len() < 2 {
            continue;
        }
        let metal = body.material == Material::Pec;
        if opts.mirror {
            outlines.push(Outline {
                pts: pts.iter().map(|p| (-p.0, p.1)).collect(),
                metal,
            });
        }
        outlines.push(Outline { pts, metal });
    }

    let mut legend = Vec::new();
    let wall_kinds: Vec<WallKind> = walls.iter().map(|w| w.kind).collect();
    if wall_kinds.contains(&WallKind::Pec) {
        legend.push(Legend::PecWall);
    }
    if wall_kinds.contains(&WallKind::Pmc) {
        legend.push(Legend::PmcWall);
    }
    if let Some(p) = unfolded {
        legend.push(Legend::Plane(p));
    }
    if outlines.iter().any(|o| o.metal) {
        legend.push(Legend::Metal);
    }
    if outlines.iter().any(|o| !o.metal) {
        legend.push(Legend::Dielectric);
    }
    if o + b + t > 0 {
        legend.push(if crop {
            Legend::Cropped
        } else {
            Legend::Absorber
        });
    }

    // Layout: the data area keeps equal mm scales where it can.
    let width = opts.width.max(480) as f64;
    let (xe, ze) = (view.1 - view.0, view.3 - view.2);
    let mut plot_w = width - (BAR_PANEL + RIGHT_MARGIN + MARGIN + Y_LABELS) as f64;
    let mut plot_h = plot_w * ze / xe;
    if plot_h > MAX_PLOT_H {
        plot_h = MAX_PLOT_H;
        plot_w = (plot_h * xe / ze).max(MIN_PLOT);
    }
    let plot_h = plot_h.max(MIN_PLOT);
    let w = (plot_w + (BAR_PANEL + RIGHT_MARGIN + MARGIN + Y_LABELS) as f64).round();
    let rows = legend_rows(&legend, w);

    let mode = scene.mode;
    let mut title = if mode.label.is_empty() {
        String::new()
    } else {
        format!("{}  ·  ", mode.label)
    };
    title += &format!(
        "m = {}  ·  f = {:.4} GHz  ·  {}",
        mode.m,
        mode.freq_hz / 1e9,
        q_text(mode)
    );
    let note = match (scene.plane, unfolded) {
        (Some(p), None) => format!("  ·  half over a {} plane", p.name().to_uppercase()),
        (_, Some(_)) => "  ·  mirrored about the symmetry plane".to_string(),
        _ => String::new(),
    };
    let left = (-(-1f64).powi(m as i32), (-1f64).powi(m as i32));
    Ok(Base {
        map: FieldMap {
            lat: cf.lattice(),
            values: Vec::new(),
            signed: false,
            left_sign: 1.0,
            map: ColourMap::sequential(),
            arrows: None,
            arrow_left: left,
            mirror: opts.mirror,
            view,
            shade,
            walls,
            outlines,
            title,
            subtitle: note,
            bar_label: String::new(),
            bar_ticks: Vec::new(),
            legend,
            legend_rows: rows,
            width: w as u32,
            plot_h: plot_h.round() as u32,
            min_sub_lines: 1,
            arrow_spacing: opts.arrow_spacing_px,
            svg_blocks: opts.svg_blocks.max(1),
        },
        cf,
        inside,
        kind: opts.field,
    })
}

impl Draw for FieldMap {
    fn canvas_size(&self) -> (u32, u32) {
        let top = top_height(self.sub_lines().len(), self.legend_rows);
        (self.width, self.plot_h + top + 2 * MARGIN + X_LABELS)
    }

    fn draw_on<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
        raster: Raster,
    ) -> Result<Option<PlotFrame>, String> {
        let w = self.width;
        root.draw_text(&self.title, &text(TITLE_PX), (12, 10))
            .map_err(de)?;
        let lines = self.sub_lines();
        for (k, l) in lines.iter().enumerate() {
            root.draw_text(l, &text(SUB_PX), (12, 44 + 22 * k as i32))
                .map_err(de)?;
        }
        self.draw_legend(root, legend_top(lines.len()))?;
        let top = top_height(lines.len(), self.legend_rows);
        let (_, rest) = root.split_vertically(top);
        let (chart_area, _) = rest.split_horizontally(w - BAR_PANEL);
        let (x0, x1, z0, z1) = self.view;
        let mm = |v: f64| v * 1e3;
        let mut chart = ChartBuilder::on(&chart_area)
            .margin_top(MARGIN)
            .margin_bottom(MARGIN)
            .margin_left(MARGIN)
            .margin_right(RIGHT_MARGIN)
            .x_label_area_size(X_LABELS)
            .y_label_area_size(Y_LABELS)
            .build_cartesian_2d(mm(x0)..mm(x1), mm(z0)..mm(z1))
            .map_err(de)?;
        let xt = nice_ticks(mm(x0), mm(x1), 6);
        let zt = nice_ticks(mm(z0), mm(z1), 6);
        let xs = if xt.len() > 1 { xt[1] - xt[0] } else { 1.0 };
        let zs = if zt.len() > 1 { zt[1] - zt[0] } else { 1.0 };
        let xfmt = |v: &f64| tick_label(*v, xs);
        let zfmt = |v: &f64| tick_label(*v, zs);
        chart
            .configure_mesh()
            .disable_mesh()
            .x_labels(xt.len().max(2))
            .y_labels(zt.len().max(2))
            .x_label_formatter(&xfmt)
            .y_label_formatter(&zfmt)
            .x_desc(if self.mirror {
                "x (mm), cross-section through the axis"
            } else {
                "r (mm)"
            })
            .y_desc("z (mm)")
            .label_style((FAMILY, TICK_PX))
            .axis_desc_style((FAMILY, DESC_PX))
            .draw()
            .map_err(de)?;
        let (left, bottom) = chart.backend_coord(&(mm(x0), mm(z0)));
        let (right, topp) = chart.backend_coord(&(mm(x1), mm(z1)));
        let frame = PlotFrame {
            left,
            right,
            top: topp,
            bottom,
            x_mm: (mm(x0), mm(x1)),
            z_mm: (mm(z0), mm(z1)),
        };
        self.draw_raster(root, &frame, raster)?;
        let px = |x: f64, z: f64| {
            let (a, b) = frame.pixel_of(mm(x), mm(z));
            (a as f64, b as f64)
        };
        let clip = Clip {
            x0: left as f64,
            y0: topp as f64,
            x1: right as f64,
            y1: bottom as f64,
        };
        // The axis, in a mirrored map.
        if self.mirror {
            polyline(
                root,
                &[px(0.0, z0), px(0.0, z1)],
                &clip,
                RGBColor(110, 110, 110).stroke_width(1),
                Some((9, 5)),
            )?;
        }
        // Bodies.
        for o in &self.outlines {
            let pts: Vec<(f64, f64)> = o.pts.iter().map(|p| px(p.0, p.1)).collect();
            if o.metal {
                let poly = clip.polygon(&pts);
                if poly.len() >= 3 {
                    let ip: Vec<(i32, i32)> = poly
                        .iter()
                        .map(|p| (p.0.round() as i32, p.1.round() as i32))
                        .collect();
                    root.draw(&Polygon::new(ip, METAL.filled())).map_err(de)?;
                }
            }
            for k in 0..o.pts.len() {
                let (a, b) = (o.pts[k], o.pts[(k + 1) % o.pts.len()]);
                let on_axis = a.0.abs() < 1e-12 && b.0.abs() < 1e-12;
                if on_axis {
                    continue;
                }
                let seg = [px(a.0, a.1), px(b.0, b.1)];
                if o.metal {
                    polyline(root, &seg, &clip, INK.stroke_width(2), None)?;
                } else {
                    polyline(root, &seg, &clip, BLACK.stroke_width(4), None)?;
                    polyline(root, &seg, &clip, WHITE.stroke_width(2), None)?;
                }
            }
        }
        // Arrows.
        let s = self.arrow_spacing.max(8) as f64;
        for ((x, z), (fx, fz)) in self.arrows(&frame) {
            let (cx, cy) = frame.pixel_of(x, z);
            let (cx, cy) = (cx as f64, cy as f64);
            let half = 0.5 * 0.85 * s;
            let (dx, dy) = (fx * half, -fz * half);
            let mut under = self.map.at(self.t_at(x * 1e-3, z * 1e-3));
            if self.in_absorber(x * 1e-3, z * 1e-3) {
                under = under.map(|v| (0.4 * v as f64 + 0.6 * 255.0).round() as u8);
            }
            let ink = if rgb8_to_oklab(under).l > 0.6 {
                BLACK
            } else {
                WHITE
            };
            arrow(root, (cx - dx, cy - dy), (cx + dx, cy + dy), ink, 2)?;
        }
        // Walls.
        for wl in &self.walls {
            let seg = [px(wl.a.0, wl.a.1), px(wl.b.0, wl.b.1)];
            let wide = Clip {
                x0: clip.x0 - 4.0,
                y0: clip.y0 - 4.0,
                x1: clip.x1 + 4.0,
                y1: clip.y1 + 4.0,
            };
            match wl.kind {
                WallKind::Pec => polyline(root, &seg, &wide, INK.stroke_width(6), None)?,
                WallKind::Pmc => {
                    polyline(root, &seg, &wide, PMC_INK.stroke_width(5), Some((12, 7)))?
                }
                WallKind::Plane(_) => {
                    polyline(root, &seg, &clip, PMC_INK.stroke_width(2), Some((10, 6)))?
                }
            }
        }
        root.draw(&Rectangle::new(
            [(left, topp), (right, bottom)],
            INK.stroke_width(1),
        ))
        .map_err(de)?;
        // Colour bar.
        let bx = (w - BAR_PANEL) as i32 + 16;
        colour_bar(
            root,
            &self.map,
            (bx, topp, bx + 24, bottom),
            &self.bar_ticks,
            &self.bar_label,
            raster,
            TICK_PX,
        )?;
        Ok(Some(frame))
    }
}

impl FieldMap {
    fn draw_raster<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
        f: &PlotFrame,
        raster: Raster,
    ) -> Result<(), String> {
        let colour = |px: f64, py: f64| {
            let u = (px - f.left as f64) / (f.right - f.left) as f64;
            let w = (f.bottom as f64 - py) / (f.bottom - f.top) as f64;
            let x = self.view.0 + u * (self.view.1 - self.view.0);
            let z = self.view.2 + w * (self.view.3 - self.view.2);
            let c = self.map.at(self.t_at(x, z));
            if self.in_absorber(x, z) {
                rgb(c.map(|v| (0.4 * v as f64 + 0.6 * 255.0).round() as u8))
            } else {
                rgb(c)
            }
        };
        match raster {
            Raster::Pixels => {
                for py in f.top..=f.bottom {
                    for px in f.left..=f.right {
                        root.draw_pixel((px, py), &colour(px as f64, py as f64))
                            .map_err(de)?;
                    }
                }
            }
            Raster::Blocks(n) => {
                let (pw, ph) = ((f.right - f.left) as f64, (f.bottom - f.top) as f64);
                let nx = ((n as f64 * pw / ph).sqrt().floor() as usize).clamp(1, 4000);
                let ny = (n / nx).max(1);
                for by in 0..ny {
                    let ya = f.top + ((by as f64 * ph) / ny as f64).round() as i32;
                    let yb = f.top + (((by + 1) as f64 * ph) / ny as f64).round() as i32;
                    for bx in 0..nx {
                        let xa = f.left + ((bx as f64 * pw) / nx as f64).round() as i32;
                        let xb = f.left + (((bx + 1) as f64 * pw) / nx as f64).round() as i32;
                        let c = colour(0.5 * (xa + xb) as f64, 0.5 * (ya + yb) as f64);
                        root.draw(&Rectangle::new([(xa, ya), (xb, yb)], c.filled()))
                            .map_err(de)?;
                    }
                }
            }
        }
        Ok(())
    }

    /// The subtitle broken into lines that fit (at least
    /// `min_sub_lines`, so animation frames keep one size).
    fn sub_lines(&self) -> Vec<String> {
        let mut l = wrap(&self.subtitle, SUB_PX, self.width as f64 - 24.0);
        while l.len() < self.min_sub_lines {
            l.push(String::new());
        }
        l
    }

    fn draw_legend<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
        y0: f64,
    ) -> Result<(), String> {
        let width = self.width as f64;
        let mut x = 12.0;
        let mut y = y0;
        for it in &self.legend {
            let tw = text_width(it.text(), LEGEND_PX);
            if x + LEGEND_GLYPH + 8.0 + tw > width - 12.0 && x > 12.0 {
                x = 12.0;
                y += 24.0;
            }
            let (gx0, gx1) = (x as i32, (x + LEGEND_GLYPH) as i32);
            let gy = y as i32 + 9;
            let all = Clip {
                x0: -1e9,
                y0: -1e9,
                x1: 1e9,
                y1: 1e9,
            };
            let seg = [(gx0 as f64, gy as f64), (gx1 as f64, gy as f64)];
            match it {
                Legend::PecWall => polyline(root, &seg, &all, INK.stroke_width(6), None)?,
                Legend::PmcWall => {
                    polyline(root, &seg, &all, PMC_INK.stroke_width(5), Some((9, 5)))?
                }
                Legend::Plane(_) => {
                    polyline(root, &seg, &all, PMC_INK.stroke_width(2), Some((7, 4)))?
                }
                Legend::Metal => root
                    .draw(&Rectangle::new(
                        [(gx0, gy - 7), (gx1, gy + 7)],
                        METAL.filled(),
                    ))
                    .map_err(de)?,
                Legend::Dielectric => {
                    let sq = [
                        (gx0 as f64, (gy - 7) as f64),
                        (gx1 as f64, (gy - 7) as f64),
                        (gx1 as f64, (gy + 7) as f64),
                        (gx0 as f64, (gy + 7) as f64),
                        (gx0 as f64, (gy - 7) as f64),
                    ];
                    root.draw(&Rectangle::new(
                        [(gx0, gy - 7), (gx1, gy + 7)],
                        WHITE.filled(),
                    ))
                    .map_err(de)?;
                    polyline(root, &sq, &all, BLACK.stroke_width(4), None)?;
                    polyline(root, &sq, &all, WHITE.stroke_width(2), None)?;
                }
                Legend::Absorber | Legend::Cropped => {
                    root.draw(&Rectangle::new(
                        [(gx0, gy - 7), (gx1, gy + 7)],
                        RGBColor(230, 230, 230).filled(),
                    ))
                    .map_err(de)?;
                    root.draw(&Rectangle::new(
                        [(gx0, gy - 7), (gx1, gy + 7)],
                        RGBColor(120, 120, 120).stroke_width(1),
                    ))
                    .map_err(de)?;
                    if *it == Legend::Cropped {
                        polyline(
                            root,
                            &[(gx0 as f64, (gy + 7) as f64), (gx1 as f64, (gy - 7) as f64)],
                            &all,
                            RGBColor(120, 120, 120).stroke_width(1),
                            None,
                        )?;
                    }
                }
            }
            root.draw_text(
                it.text(),
                &text_at(LEGEND_PX, HPos::Left, VPos::Center),
                ((x + LEGEND_GLYPH + 8.0) as i32, gy),
            )
            .map_err(de)?;
            x += LEGEND_GLYPH + 8.0 + tw + LEGEND_GAP;
        }
        Ok(())
    }
}
