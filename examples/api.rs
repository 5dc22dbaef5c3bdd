//! Using lathe as a library: build a scenario in code, solve it, read the
//! modes and the field of one of them.
//!
//! The structure is our own: a dielectric ring resonator (ε_r 29.6, outer
//! radius 5.7 mm, bore 1.4 mm, 4.9 mm tall) standing on an infinite ground
//! plane, absorbers above and around it — a ring DRA of the kind used to
//! raise the bandwidth of a puck antenna. We ask for its m = 1 modes
//! between 4.5 and 8.5 GHz and then look at where the broadside mode's
//! electric field is strongest.
//!
//! Run: `cargo run --release --example api`
use lathe::mesh::{Body, Component, Material, Shape};
use lathe::scenario::Scenario;
use lathe::solver::{Absorber, OuterWall, Walls, ZWall};
use lathe::study::run_study;

const MM: f64 = 1e-3;
const GHZ: f64 = 1e9;

/// The scenario, at `cells_per_wavelength` cells per wavelength in the ring
/// at the top of the band (30 is lathe's default; the example test uses a
/// coarser grid).
pub fn scenario(cells_per_wavelength: f64) -> Scenario {
    let f_min = 4.5 * GHZ;
    let pml = Absorber::default_for(f_min);
    Scenario {
        radius: 17.0 * MM,
        z_min: 0.0,
        z_max: 16.0 * MM,
        cell: None,
        cells_per_wavelength,
        walls: Walls {
            bottom: ZWall::Pec,
            top: ZWall::Pml(pml),
            outer: OuterWall::Pml(pml),
        },
        bodies: vec![Body {
            shape: Shape::Ring {
                inner_radius: 1.4 * MM,
                outer_radius: 5.7 * MM,
                height: 4.9 * MM,
                base: 0.0,
            },
            material: Material::Dielectric {
                eps_r: 29.6,
                loss_tangent: 0.0,
            },
        }],
        m: vec![1],
        f_min,
        f_max: 8.5 * GHZ,
        max_periods: None,
        use_symmetry: true,
    }
}

/// Solves the scenario and prints what it finds; returns the frequency of
/// the lowest mode (Hz) and the radius (m) where its |E_r| peaks on the
/// ground plane.
pub fn demo(cells_per_wavelength: f64) -> Result<(f64, f64), Box<dyn std::error::Error>> {
    let s = scenario(cells_per_wavelength);
    let study = run_study(&s).map_err(|e| format!("{e:?}"))?;
    println!("  m  mode         f (GHz)        Q");
    for (mode, _plane) in study.modes() {
        println!(
            "{:>3}  {:<10} {:>9.4} {:>8.2}",
            mode.m,
            mode.label,
            mode.freq_hz / GHZ,
            mode.q
        );
    }
    // The first run holds the m = 1 modes and, for each, its field: complex
    // phasors on the staggered grid (see lathe::mesh::Component for where
    // each component sits).
    let run = &study.runs[0].output;
    let lowest = run.modes.first().ok_or("no mode found in the band")?;
    let field = run.mode_fields[0]
        .as_ref()
        .ok_or("the lowest mode has no field")?;
    let g = &run.grid;
    // E_r sits at r = (i + ½)Δr, z = jΔz; row i holds nz + 1 values. On the
    // ground plane (j = 0) E_r is tangential and vanishes; one cell up it
    // is the field just above the plane.
    let er = field.get(Component::Er);
    let (i_peak, _) = (0..g.nr)
        .map(|i| (i, er[i * (g.nz + 1) + 1].norm()))
        .max_by(|a, b| a.1.total_cmp(&b.1))
        .ok_or("empty grid")?;
    let r_peak = g.r_half(i_peak);
    println!(
        "{} at {:.4} GHz: |E_r| just above the ground peaks at r = {:.2} mm",
        lowest.label,
        lowest.freq_hz / GHZ,
        r_peak / MM
    );
    Ok((lowest.freq_hz, r_peak))
}

#[allow(dead_code)]
fn main() -> Result<(), Box<dyn std::error::Error>> {
    demo(30.0).map(|_| ())
}
