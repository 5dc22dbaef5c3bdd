//! The pictures of `lathe::plots`, made from small fast runs of our own
//! scenarios, checked for their files (PNG signature and IHDR size, GIF
//! header, SVG size) and for what they show.
//!
//! - An empty PEC cavity (radius 6.1 mm, height 4.7 mm): its lowest mode
//!   is TM010, E_z ∝ J0(x01 r/a) with E_r = 0 (Pozar, *Microwave
//!   Engineering*, §6.3, the p = 0 TM mode of a circular cavity; x01 from
//!   `lathe::solver::exact`, checked there against Abramowitz & Stegun
//!   Table 9.5). The map's colours are decoded back to |E| through the
//!   sequential map's lightness, which is linear in the value by
//!   construction (`lathe::plots::colour`).
//! - A dielectric puck (ε_r 20.5, radius 3.05 mm) with a metal post in a
//!   closed can, m = 1: E_φ maps, outlines, metal.
//! - The same puck isolated in free space, solved as two halves over its
//!   mid-plane: unfolding and absorber shading.
use lathe::mesh::Component;
use lathe::plots::colour::{rgb8_to_oklab, ColourMap};
use lathe::plots::{
    file_label, probe_spectrum, write_study, AbsorberView, Animation, AnimationOptions,
    CentredField, DirectivityMap, FieldKind, FieldMap, Figure, MapOptions, ModeScene, PlotError,
    PolarCut, SetOptions, Shown, Spectrum, SpectrumOptions, Window,
};
use lathe::scenario::Scenario;
use lathe::solver::exact::bessel::{bessel_j, bessel_j_zeros};
use lathe::solver::{solve, RunOutput};
use lathe::study::{run_study, Study, StudyRun};
use std::path::{Path, PathBuf};
use std::sync::OnceLock;

/// A fresh, empty folder for one test's files.
fn fresh_dir(name: &str) -> PathBuf {
    let d = PathBuf::from(env!("CARGO_TARGET_TMPDIR"))
        .join("plots")
        .join(name);
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

/// Width and height from a PNG file's IHDR chunk, after checking the
/// signature (PNG specification, ISO/IEC 15948, §5.2 and §11.2.2).
fn png_size(path: &Path) -> (u32, u32) {
    let b = std::fs::read(path).unwrap();
    assert!(b.len() > 33, "{}: too short for a PNG", path.display());
    assert_eq!(
        &b[..8],
        b"\x89PNG\r\n\x1a\n",
        "{}: no PNG signature",
        path.display()
    );
    assert_eq!(
        &b[12..16],
        b"IHDR",
        "{}: first chunk is not IHDR",
        path.display()
    );
    let be = |k: usize| u32::from_be_bytes([b[k], b[k + 1], b[k + 2], b[k + 3]]);
    (be(16), be(20))
}

/// Width and height from a GIF header (GIF89a specification, §17–18:
/// logical screen width and height, little-endian).
fn gif_size(path: &Path) -> (u32, u32) {
    let b = std::fs::read(path).unwrap();
    assert_eq!(&b[..6], b"GIF89a", "{}: no GIF89a header", path.display());
    let le = |k: usize| u16::from_le_bytes([b[k], b[k + 1]]) as u32;
    (le(6), le(8))
}

fn scenario(text: &str) -> Scenario {
    Scenario::parse(text, "test").unwrap()
}

const CAVITY: &str = r#"
[region]
radius = 6.1
z_min = 0.0
z_max = 4.7
[boundary]
outer = "pec"
bottom = "pec"
top = "pec"
[search]
m = [0]
f_min = 15.0
f_max = 22.0
"#;

const PUCK: &str = r#"
[region]
radius = 7.3
z_min = 0.0
z_max = 6.2
cell = 0.2
[boundary]
outer = "pec"
bottom = "pec"
top = "pec"
[[body]]
shape = "cylinder"
radius = 3.05
height = 2.2
base = 1.9
eps_r = 20.5
[[body]]
shape = "cylinder"
radius = 1.3
height = 0.9
base = 5.3
conductor = "pec"
[search]
m = [1]
f_min = 10.0
f_max = 18.0
"#;

const OPEN: &str = r#"
[region]
radius = 9.4
z_min = -5.3
z_max = 5.3
cell = 0.25
[boundary]
outer = "pml"
bottom = "pml"
top = "pml"
[[body]]
shape = "cylinder"
radius = 3.05
height = 2.2
base = -1.1
eps_r = 20.5
[search]
m = [0]
f_min = 9.0
f_max = 16.0
"#;

fn runs(
    text: &'static str,
    cell: &'static OnceLock<(Scenario, Vec<RunOutput>)>,
) -> &'static (Scenario, Vec<RunOutput>) {
    cell.get_or_init(|| {
        let s = scenario(text);
        let r = solve(&s.problem().unwrap(), &s.m).unwrap();
        (s, r)
    })
}

fn cavity() -> &'static (Scenario, Vec<RunOutput>) {
    static C: OnceLock<(Scenario, Vec<RunOutput>)> = OnceLock::new();
    runs(CAVITY, &C)
}

fn puck() -> &'static (Scenario, Vec<RunOutput>) {
    static C: OnceLock<(Scenario, Vec<RunOutput>)> = OnceLock::new();
    runs(PUCK, &C)
}

fn open() -> &'static (Scenario, Study) {
    static C: OnceLock<(Scenario, Study)> = OnceLock::new();
    C.get_or_init(|| {
        let s = scenario(OPEN);
        let st = run_study(&s).unwrap();
        (s, st)
    })
}

/// The TM010 scene of the cavity, after checking the run found it.
fn tm010() -> ModeScene<'static> {
    let (s, r) = cavity();
    assert_eq!(r[0].modes.len(), 1, "band holds TM010 alone");
    // f = c·x01/(2πa) (Pozar §6.3); 0.5 % is the default resolution's
    // accuracy (tests/closed_cavity.rs).
    let exact = 299_792_458.0 * bessel_j_zeros(0, 1)[0] / (2.0 * std::f64::consts::PI * s.radius);
    assert!((r[0].modes[0].freq_hz / exact - 1.0).abs() < 5e-3);
    ModeScene::from_run(&r[0], 0, &s.bodies).unwrap()
}

/// Oklab lightness of a pixel.
fn lightness(p: &lathe::plots::Picture, x: i32, y: i32) -> f64 {
    rgb8_to_oklab(p.pixel(x, y).expect("inside the picture")).l
}

#[test]
fn colour_maps_have_strictly_monotone_oklab_lightness() {
    // Construction (lathe::plots::colour): L linear from 0.15 to 0.96.
    let seq = ColourMap::sequential();
    let l = seq.lightness();
    assert_eq!(l.len(), 256);
    assert!(
        l.windows(2).all(|w| w[1] > w[0]),
        "sequential L not increasing"
    );
    assert!((l[0] - 0.15).abs() < 1e-3 && (l[255] - 0.96).abs() < 1e-3);
    // Still strictly increasing after rounding to 8 bits, every 4th entry
    // (adjacent entries are 0.003 apart in L, about one 8-bit step).
    let l8: Vec<f64> = (0..64)
        .map(|k| rgb8_to_oklab(seq.at(k as f64 / 63.0)).l)
        .collect();
    assert!(l8.windows(2).all(|w| w[1] > w[0]), "8-bit L: {l8:?}");
    // Diverging: L rises to the neutral centre and falls after it,
    // symmetrically.
    let div = ColourMap::diverging();
    let l = div.lightness();
    assert!(l[..128].windows(2).all(|w| w[1] > w[0]));
    assert!(l[128..].windows(2).all(|w| w[1] < w[0]));
    for k in 0..128 {
        // 1e-6: the gamut search stops within 1e-9 of the sRGB cube.
        assert!((l[k] - l[255 - k]).abs() < 1e-6, "entry {k}");
    }
    let c = lathe::plots::colour::srgb_to_oklab(div.table()[128]);
    assert!(c.a.hypot(c.b) < 0.01, "centre not neutral: {c:?}");
}

#[test]
fn tm010_map_decodes_to_the_bessel_profile() {
    let d = fresh_dir("tm010");
    let scene = tm010();
    let (s, _) = cavity();
    let a = s.radius;
    let fig = FieldMap::new(
        &scene,
        &MapOptions {
            arrows: false,
            ..MapOptions::default()
        },
    )
    .unwrap();
    let path = fig.write(d.join("tm010.png")).unwrap();
    let pic = fig.render().unwrap();
    assert_eq!(png_size(&path), fig.size());
    assert_eq!((pic.width, pic.height), fig.size());
    assert_eq!(pic.width, 900);
    let f = pic.frame.unwrap();
    // The data area covers the cavity: r 0 … a, z 0 … height, in mm.
    assert!((f.x_mm.1 - a * 1e3).abs() < 1e-9 && (f.z_mm.1 - 4.7).abs() < 1e-9);
    // Equal scales on both axes (±1 px of rounding).
    let sx = (f.right - f.left) as f64 / (f.x_mm.1 - f.x_mm.0);
    let sz = (f.bottom - f.top) as f64 / (f.z_mm.1 - f.z_mm.0);
    assert!((sx / sz - 1.0).abs() < 0.01, "{sx} vs {sz} px/mm");
    // Along the mid-height row: L = 0.15 + 0.81 t, so t decodes |E|/max.
    // Tolerance 0.04 in t: 8-bit colours (0.005), a cell's worth of
    // discretisation and the half cell next to the wall, where the map
    // keeps the last cell centre's value (J0 changes by 0.02 there).
    // Pixels within 5 px of the edges are left out: the PEC wall lines
    // (6 px, centred on the edge) cover them.
    let x01 = bessel_j_zeros(0, 1)[0];
    let z_mid = 2.35;
    let mut cols = Vec::new();
    for px in f.left + 1..f.right - 5 {
        let (x, _) = f.coords_of(px, 0);
        let (_, py) = f.pixel_of(x, z_mid);
        let t = (lightness(&pic, px, py) - 0.15) / 0.81;
        let exact = bessel_j(0, x01 * x * 1e-3 / a);
        assert!(
            (t - exact).abs() < 0.04,
            "r = {x:.3} mm: map {t:.4}, J0 {exact:.4}"
        );
        cols.push((x, t));
    }
    let brightest = cols.iter().max_by(|p, q| p.1.total_cmp(&q.1)).unwrap();
    let darkest = cols.iter().min_by(|p, q| p.1.total_cmp(&q.1)).unwrap();
    assert!(
        brightest.0 < 0.15 * a * 1e3,
        "brightest at r = {}",
        brightest.0
    );
    assert!(darkest.0 > 0.85 * a * 1e3, "darkest at r = {}", darkest.0);
}

#[test]
fn tm010_arrows_point_along_the_axis() {
    // TM010 has E_r = 0 everywhere (Pozar §6.3): every drawn arrow is
    // vertical. 20 : 1 allows the leakage of other modes into the running
    // transform (lathe_solver::modefield).
    let d = fresh_dir("tm010_arrows");
    let scene = tm010();
    let fig = FieldMap::new(&scene, &MapOptions::default()).unwrap();
    let path = fig.write(d.join("tm010_arrows.png")).unwrap();
    assert_eq!(png_size(&path), fig.size());
    // A narrow picture wraps its subtitle and keeps its width.
    let narrow = FieldMap::new(
        &scene,
        &MapOptions {
            width: 480,
            ..MapOptions::default()
        },
    )
    .unwrap();
    let p = narrow.write(d.join("tm010_narrow.png")).unwrap();
    assert_eq!(png_size(&p), narrow.size());
    assert_eq!(narrow.size().0, 480);
    let frame = fig.frame().unwrap();
    let arrows = fig.arrows(&frame);
    assert!(arrows.len() > 50, "only {} arrows", arrows.len());
    for ((x, z), (fx, fz)) in &arrows {
        assert!(
            fz.abs() > 20.0 * fx.abs(),
            "arrow at ({x:.2}, {z:.2}) mm: ({fx}, {fz})"
        );
    }
    // Longest arrows near the axis (J0 peaks there), shortest near the wall.
    let near = arrows
        .iter()
        .filter(|a| a.0 .0 < 1.0)
        .map(|a| a.1 .1.abs())
        .fold(0.0, f64::max);
    let far = arrows
        .iter()
        .filter(|a| a.0 .0 > 5.0)
        .map(|a| a.1 .1.abs())
        .fold(0.0, f64::max);
    assert!(near > 0.9 && far < 0.3, "near {near}, far {far}");
    // E_φ of an m = 0 TM mode is zero: refused, naming the quantity.
    let e = FieldMap::new(
        &scene,
        &MapOptions {
            shown: Shown::Azimuthal,
            ..MapOptions::default()
        },
    )
    .unwrap_err();
    assert!(e.to_string().contains("|Eφ|"), "{e}");
}

#[test]
fn svg_map_stays_small_and_the_mirror_is_symmetric() {
    let d = fresh_dir("svg_mirror");
    let scene = tm010();
    let fig = FieldMap::new(&scene, &MapOptions::default()).unwrap();
    let svg = fig.write(d.join("tm010.svg")).unwrap();
    let text = std::fs::read_to_string(&svg).unwrap();
    assert!(text.contains("<svg") && text.trim_end().ends_with("</svg>"));
    // The brief's bound; the raster is capped at MapOptions::svg_blocks.
    assert!(text.len() < 1_000_000, "SVG is {} bytes", text.len());
    let mirror = FieldMap::new(
        &scene,
        &MapOptions {
            mirror: true,
            arrows: false,
            ..MapOptions::default()
        },
    )
    .unwrap();
    let path = mirror.write(d.join("tm010_mirror.png")).unwrap();
    assert_eq!(png_size(&path), mirror.size());
    let pic = mirror.render().unwrap();
    let f = pic.frame.unwrap();
    assert!(
        (f.x_mm.0 + f.x_mm.1).abs() < 1e-9,
        "not −r … r: {:?}",
        f.x_mm
    );
    // |E| of an m = 0 mode is the same at ±x; one 8-bit step of tolerance.
    for x in [0.5, 1.7, 3.1, 4.6, 5.8] {
        for z in [0.6, 2.35, 4.1] {
            let (a, b) = (f.pixel_of(x, z), f.pixel_of(-x, z));
            let (la, lb) = (lightness(&pic, a.0, a.1), lightness(&pic, b.0, b.1));
            assert!((la - lb).abs() < 0.01, "({x}, {z}) mm: {la} vs {lb}");
        }
    }
}

#[test]
fn a_half_study_is_unfolded_about_its_plane() {
    let d = fresh_dir("half");
    let (s, study) = open();
    assert_eq!(study.runs.len(), 2, "the isolated puck is solved as halves");
    // In this band only the PMC half (TE01δ) has a mode; the PEC half
    // couples to nothing and reports nothing (its signals are round-off).
    let with_modes: Vec<usize> = (0..2)
        .filter(|&r| !study.runs[r].output.modes.is_empty())
        .collect();
    assert!(!with_modes.is_empty());
    for run in with_modes {
        let scene = ModeScene::from_study(study, run, 0, &s.bodies).unwrap();
        assert!(scene.plane.is_some());
        let opts = MapOptions {
            arrows: false,
            ..MapOptions::default()
        };
        let fig = FieldMap::new(&scene, &opts).unwrap();
        let path = fig.write(d.join(format!("half{run}.png"))).unwrap();
        assert_eq!(png_size(&path), fig.size());
        let pic = fig.render().unwrap();
        let f = pic.frame.unwrap();
        // Cropped to the physical region, and mirrored below the plane.
        assert!((f.z_mm.0 + 5.3).abs() < 1e-9 && (f.z_mm.1 - 5.3).abs() < 1e-9);
        assert!((f.x_mm.1 - 9.4).abs() < 1e-9);
        // |E| is even about the plane on either wall (PEC: E_r, E_φ odd,
        // E_z even; PMC the reverse).
        for x in [0.8, 2.2, 4.0] {
            for z in [0.4, 1.5, 3.0] {
                let (a, b) = (f.pixel_of(x, z), f.pixel_of(x, -z));
                let (la, lb) = (lightness(&pic, a.0, a.1), lightness(&pic, b.0, b.1));
                assert!(
                    (la - lb).abs() < 0.01,
                    "run {run} ({x}, ±{z}) mm: {la} vs {lb}"
                );
            }
        }
        // The whole grid, absorber washed out, the half only.
        let shaded = FieldMap::new(
            &scene,
            &MapOptions {
                absorber: AbsorberView::Shade,
                unfold: false,
                ..opts.clone()
            },
        )
        .unwrap();
        let path = shaded
            .write(d.join(format!("half{run}_shaded.png")))
            .unwrap();
        assert_eq!(png_size(&path), shaded.size());
        let f = shaded.frame().unwrap();
        assert!(f.z_mm.0.abs() < 1e-9, "a half starts at its plane");
        assert!(
            f.x_mm.1 > 9.4 + 1.0 && f.z_mm.1 > 5.3 + 1.0,
            "absorber not shown"
        );
    }
    assert!(ModeScene::from_study(study, 2, 0, &s.bodies).is_err());
}

#[test]
fn m1_maps_show_the_azimuthal_component() {
    let d = fresh_dir("m1");
    let (s, r) = puck();
    assert!(!r[0].modes.is_empty());
    let scene = ModeScene::from_run(&r[0], 0, &s.bodies).unwrap();
    for (name, opts) in [
        ("total", MapOptions::default()),
        (
            "ephi_mirror",
            MapOptions {
                shown: Shown::Azimuthal,
                mirror: true,
                ..MapOptions::default()
            },
        ),
        (
            "h",
            MapOptions {
                field: FieldKind::Magnetic,
                ..MapOptions::default()
            },
        ),
    ] {
        let fig = FieldMap::new(&scene, &opts).unwrap();
        let path = fig.write(d.join(format!("{name}.png"))).unwrap();
        assert_eq!(png_size(&path), fig.size(), "{name}");
    }
    // The metal post is filled grey (150, 150, 150) at its centre.
    let fig = FieldMap::new(&scene, &MapOptions::default()).unwrap();
    let pic = fig.render().unwrap();
    let f = pic.frame.unwrap();
    let (x, y) = f.pixel_of(0.65, 5.75);
    assert_eq!(pic.pixel(x, y), Some([150, 150, 150]));
    // No arrows are drawn inside the metal.
    assert!(fig
        .arrows(&f)
        .iter()
        .all(|((x, z), _)| !(*x < 1.3 && *z > 5.3)));
}

#[test]
fn a_mode_without_in_plane_field_gets_no_arrows() {
    // m = 0 TE modes have E_φ only (they decouple exactly from E_r, E_z);
    // the rule (lathe::plots field maps): no arrows when the in-plane
    // envelope stays below 1 % of the total. Every mode of both halves is
    // checked against the rule, and at least one such mode must be there
    // (the isolated puck's TE mode over the PMC plane).
    let (s, study) = open();
    let mut without = 0;
    for (k, run) in study.runs.iter().enumerate() {
        for (i, md) in run.output.modes.iter().enumerate() {
            let Some(field) = &run.output.mode_fields[i] else {
                continue;
            };
            let cf = CentredField::new(&run.output.grid, field, md.m);
            let max = |v: Vec<f64>| v.into_iter().fold(0.0, f64::max);
            let in_plane = max(cf.amplitude(FieldKind::Electric, Shown::InPlane));
            let total = max(cf.amplitude(FieldKind::Electric, Shown::Total));
            let scene = ModeScene::from_study(study, k, i, &s.bodies).unwrap();
            let fig = FieldMap::new(&scene, &MapOptions::default()).unwrap();
            let arrows = fig.arrows(&fig.frame().unwrap());
            if in_plane < 0.01 * total {
                without += 1;
                assert!(arrows.is_empty(), "{}: {} arrows", md.label, arrows.len());
                // Its E_φ map is drawn.
                let ephi = MapOptions {
                    shown: Shown::Azimuthal,
                    ..MapOptions::default()
                };
                assert!(FieldMap::new(&scene, &ephi).is_ok());
            } else {
                assert!(!arrows.is_empty(), "{}: no arrows", md.label);
            }
        }
    }
    assert!(without >= 1, "no mode without in-plane E");
}

#[test]
fn animation_frames_swing_sign_over_half_a_period() {
    let d = fresh_dir("animation");
    let scene = tm010();
    let opts = AnimationOptions::default();
    let anim = Animation::new(&scene, &opts).unwrap();
    // TM010 is all E_z (Pozar §6.3): the strongest component.
    assert_eq!(anim.component(), Component::Ez);
    assert_eq!(anim.frames(), 24);
    let frames = anim.write_frames(d.join("frames")).unwrap();
    assert_eq!(frames.len(), 24);
    let size = anim.frame(0).size();
    for p in &frames {
        assert_eq!(png_size(p), size, "{}", p.display());
    }
    let gif = anim.write_gif(d.join("tm010.gif")).unwrap();
    assert_eq!(gif_size(&gif), size);
    // Re{U e^{j(ψ+π)}} = −Re{U e^{jψ}}: half a period apart the diverging
    // map's value near the axis mirrors about its centre. Decode a pixel by
    // the nearest table entry (3 % tolerance: a few entries of 256 for
    // 8-bit rounding and the GIF-free PNG path).
    let div = ColourMap::diverging();
    let decode = |c: [u8; 3]| {
        (0..256)
            .min_by(|&a, &b| {
                let d = |k: usize| {
                    let e = div.at(k as f64 / 255.0);
                    (0..3)
                        .map(|i| (e[i] as f64 - c[i] as f64).powi(2))
                        .sum::<f64>()
                };
                d(a).total_cmp(&d(b))
            })
            .unwrap() as f64
            / 255.0
    };
    let at = |k: usize| {
        let pic = anim.frame(k).render().unwrap();
        let f = pic.frame.unwrap();
        // Between two arrow columns, so the pixel is the map's.
        let (x, y) = f.pixel_of(0.05, 2.35);
        decode(pic.pixel(x, y).unwrap()) - 0.5
    };
    let (k, v) = (0..12)
        .map(|k| (k, at(k)))
        .max_by(|a, b| a.1.abs().total_cmp(&b.1.abs()))
        .unwrap();
    assert!(v.abs() > 0.4, "the axis never swings: {v}");
    let w = at(k + 12);
    assert!(
        (v + w).abs() < 0.03,
        "frame {k}: {v}, frame {}: {w}",
        k + 12
    );
}

#[test]
fn spectrum_peaks_where_harmonic_inversion_puts_the_mode() {
    let d = fresh_dir("spectrum");
    let (s, r) = cavity();
    let run = &r[0];
    let mode = &run.modes[0];
    let dt = run.report.sample_dt;
    let probe = (0..run.signals.len())
        .max_by(|&a, &b| {
            let e = |k: usize| run.signals[k].iter().map(|x| x * x).sum::<f64>();
            e(a).total_cmp(&e(b))
        })
        .unwrap();
    // The raw signal rings at the grid's sampled frequency, above the
    // reported one by (ωΔt)²/24 relative (lathe_solver::modes); allow that
    // twice over plus one bin.
    let w_dt = 2.0 * std::f64::consts::PI * mode.freq_hz * run.report.dt;
    let shift = mode.freq_hz * w_dt * w_dt / 24.0;
    for window in [Window::Rectangular, Window::Hann] {
        let sp = probe_spectrum(&run.signals[probe], dt, (s.f_min, s.f_max), window, 8).unwrap();
        let k = (0..sp.magnitude.len())
            .max_by(|&a, &b| sp.magnitude[a].total_cmp(&sp.magnitude[b]))
            .unwrap();
        let bin = 1.0 / (sp.length as f64 * dt);
        assert!(
            (sp.freq_hz[k] - mode.freq_hz).abs() <= bin + 2.0 * shift,
            "{window:?}: peak {} GHz, mode {} GHz",
            sp.freq_hz[k] / 1e9,
            mode.freq_hz / 1e9
        );
    }
    let opts = SpectrumOptions::default();
    let fig = Spectrum::new(run, (s.f_min, s.f_max), &opts).unwrap();
    let path = fig.write(d.join("spectrum.png")).unwrap();
    assert_eq!(png_size(&path), opts.size);
    let svg = fig.write(d.join("spectrum.svg")).unwrap();
    assert!(std::fs::metadata(&svg).unwrap().len() < 1_000_000);
    let (s1, r1) = puck();
    let fig = Spectrum::new(&r1[0], (s1.f_min, s1.f_max), &opts).unwrap();
    assert_eq!(
        png_size(&fig.write(d.join("puck_spectrum.png")).unwrap()),
        opts.size
    );
    // A band past the Nyquist frequency is refused.
    let nyq = 0.5 / dt;
    let e = Spectrum::new(run, (s.f_min, 1.5 * nyq), &opts).unwrap_err();
    assert!(e.to_string().contains("Nyquist"), "{e}");
}

#[test]
fn pattern_charts_are_drawn_and_bad_inputs_refused() {
    let d = fresh_dir("pattern");
    // Our own test data: a short dipole's E-plane cut |sin θ|, with 5.2 dB
    // of gain and a cross-polar lobe 25 dB down.
    let th: Vec<f64> = (0..=360).map(|k| -180.0 + k as f64).collect();
    let db = |v: f64| 20.0 * v.abs().max(1e-4).log10();
    let co: Vec<f64> = th.iter().map(|t| 5.2 + db(t.to_radians().sin())).collect();
    let cr: Vec<f64> = th
        .iter()
        .map(|t| -19.8 + db((2.0 * t.to_radians()).sin()))
        .collect();
    let cut = PolarCut::new(&th, &co, &cr, "Short dipole, 3.7 GHz", "E-plane (φ = 0°)").unwrap();
    assert_eq!(
        cut.top_db(),
        10.0,
        "outer ring: 5.2 dB rounded up to 5 dB steps"
    );
    let path = cut.write(d.join("polar.png")).unwrap();
    assert_eq!(png_size(&path), cut.size());
    assert_eq!(cut.size(), (760, 830));

    let theta: Vec<f64> = (0..=36).map(|k| 5.0 * k as f64).collect();
    let phi: Vec<f64> = (0..72).map(|k| 5.0 * k as f64).collect();
    let dbi: Vec<Vec<f64>> = theta
        .iter()
        .map(|t| {
            phi.iter()
                .map(|p| 1.76 + db(t.to_radians().sin()) + 0.5 * p.to_radians().cos())
                .collect()
        })
        .collect();
    let map = DirectivityMap::new(&theta, &phi, &dbi, "Short dipole, 3.7 GHz").unwrap();
    let path = map.write(d.join("directivity.png")).unwrap();
    assert_eq!(png_size(&path), (900, 560));
    let svg = map.write(d.join("directivity.svg")).unwrap();
    assert!(std::fs::metadata(&svg).unwrap().len() < 1_000_000);
    // The peak (θ = 90°, φ = 0°) is the lightest pixel's place; the null
    // on the axis (θ = 0°) the darkest.
    let pic = map.render().unwrap();
    let f = pic.frame.unwrap();
    let (a, b) = (f.pixel_of(90.0, 0.0), f.pixel_of(0.0, 180.0));
    let (la, lb) = (lightness(&pic, a.0, a.1), lightness(&pic, b.0, b.1));
    assert!(
        (la - 0.96).abs() < 0.01 && (lb - 0.15).abs() < 0.01,
        "{la} {lb}"
    );

    // Mistakes name the input and quote the value.
    let e = PolarCut::new(&th[..4], &co[..3], &[], "t", "p").unwrap_err();
    assert!(e.to_string().contains("3 values for 4 angles"), "{e}");
    let mut bad = co.clone();
    bad[7] = f64::NAN;
    let e = PolarCut::new(&th, &bad, &cr, "t", "p").unwrap_err();
    assert!(e.to_string().contains("value 7 is NaN"), "{e}");
    let mut back = phi.clone();
    back[3] = 2.0;
    let e = DirectivityMap::new(&theta, &back, &dbi, "t").unwrap_err();
    assert!(e.to_string().contains("angles must increase"), "{e}");
    let e = DirectivityMap::new(&theta, &phi, &dbi[1..], "t").unwrap_err();
    assert!(e.to_string().contains("36 rows for 37"), "{e}");
}

#[test]
fn unwritable_paths_are_errors_that_name_them() {
    let d = fresh_dir("unwritable");
    // A path under a regular file cannot be created, even by root.
    let blocker = d.join("blocker");
    std::fs::write(&blocker, b"not a folder").unwrap();
    let scene = tm010();
    let (s, r) = cavity();
    let check = |e: PlotError, p: &Path| {
        assert!(
            matches!(e, PlotError::Write { .. }),
            "{}: {e:?}",
            p.display()
        );
        let msg = e.to_string();
        assert!(msg.contains(&p.display().to_string()), "{msg}");
    };
    let map = FieldMap::new(&scene, &MapOptions::default()).unwrap();
    for name in ["map.png", "map.svg"] {
        let p = blocker.join(name);
        check(map.write(&p).unwrap_err(), &p);
    }
    let p = blocker.join("spectrum.png");
    let sp = Spectrum::new(&r[0], (s.f_min, s.f_max), &SpectrumOptions::default()).unwrap();
    check(sp.write(&p).unwrap_err(), &p);
    let anim = Animation::new(&scene, &AnimationOptions::default()).unwrap();
    let p = blocker.join("frames");
    check(anim.write_frames(&p).unwrap_err(), &p);
    let p = blocker.join("mode.gif");
    check(anim.write_gif(&p).unwrap_err(), &p);
    // An unknown format names the file too.
    let p = d.join("map.jpg");
    let e = map.write(&p).unwrap_err();
    assert!(matches!(e, PlotError::Format { .. }));
    assert!(e.to_string().contains(&p.display().to_string()), "{e}");
    // No such mode.
    let e = ModeScene::from_run(&r[0], 5, &s.bodies).unwrap_err();
    assert!(e.to_string().contains("no mode 5"), "{e}");
}

#[test]
fn a_study_is_written_as_one_folder_of_pictures() {
    let d = fresh_dir("set");
    let (s, study) = open();
    let opts = SetOptions {
        svg: true,
        ..SetOptions::default()
    };
    let w = write_study(study, s, d.join("open"), &opts).unwrap();
    let modes: usize = study.runs.iter().map(|r| r.output.modes.len()).sum();
    let kept: usize = study
        .runs
        .iter()
        .map(|r| r.output.mode_fields.iter().filter(|f| f.is_some()).count())
        .sum();
    // Two spectra (the PEC and PMC halves), a PNG and an SVG per kept mode.
    assert_eq!(w.files.len(), 2 + 2 * kept, "{:?}", w.files);
    assert_eq!(w.skipped.len(), modes - kept);
    assert!(w.files.iter().any(|p| p.ends_with("spectrum_m0_pec.png")));
    assert!(w.files.iter().any(|p| p.ends_with("spectrum_m0_pmc.png")));
    for p in &w.files {
        match p.extension().and_then(|e| e.to_str()) {
            Some("png") => {
                let (x, y) = png_size(p);
                assert!(x >= 480 && y >= 320, "{}: {x}×{y}", p.display());
            }
            Some("svg") => assert!(std::fs::metadata(p).unwrap().len() < 1_000_000),
            _ => panic!("unexpected file {}", p.display()),
        }
    }
    // m = 1 adds the E_φ map; animations on request.
    let (s1, r1) = puck();
    let one = Study {
        bodies: s1.bodies.clone(),
        runs: vec![StudyRun {
            plane: None,
            output: r1[0].clone(),
        }],
    };
    let opts = SetOptions {
        animate: true,
        ..SetOptions::default()
    };
    let w = write_study(&one, s1, d.join("puck"), &opts).unwrap();
    let n = r1[0].modes.len();
    assert_eq!(w.files.len(), 1 + 3 * n, "{:?} {:?}", w.files, w.skipped);
    assert!(w
        .files
        .iter()
        .any(|p| p.ends_with("mode01_HEM11d_m1_ephi.png")));
    for p in w
        .files
        .iter()
        .filter(|p| p.extension().is_some_and(|e| e == "gif"))
    {
        assert_eq!(gif_size(p).0, 760);
    }
    assert_eq!(file_label("TE/TM01δ?"), "TE_TM01d");
}

#[test]
fn a_field_with_a_nan_is_refused_not_drawn() {
    let scene = tm010();
    let mut field = scene.field.clone();
    field.components[2][17].re = f64::NAN;
    let bad = ModeScene {
        field: &field,
        ..scene
    };
    let e = FieldMap::new(&bad, &MapOptions::default()).unwrap_err();
    assert!(e.to_string().contains("Ez of TM01δ is NaN"), "{e}");
    assert!(Animation::new(&bad, &AnimationOptions::default()).is_err());
}
