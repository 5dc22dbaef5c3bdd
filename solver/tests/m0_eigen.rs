//! An independent check of the TE01δ and TM01δ modes of the isolated ε_r 38
//! benchmark cylinder (radius 5.25 mm, height 4.6 mm;
//! tests/open_resonator.rs): a frequency-domain eigenvalue problem for E_φ
//! (or H_φ) alone, solved by shift and invert with a sparse LU, on a domain
//! ended by complex coordinate scaling.
//! It shares nothing with the time-domain engine but the physics: no time
//! step, no recursive-convolution absorber, no harmonic inversion.
//!
//! For m = 0 the TE family is E = E_φ(r, z) φ̂ with
//!
//! ```text
//! −(1/s_r)∂r[(1/r̃)(1/s_r)∂r(r̃ E)] − (1/s_z)∂z[(1/s_z)∂z E] = k0² ε_r E
//! ```
//!
//! in coordinates stretched beyond r = R0 and z = Z0 by
//! r̃ = r − j∫β dr (β quadratic in depth; the e^{jωt} convention, so an
//! outgoing wave e^{−jk r̃} decays in the layer). Analytic continuation
//! leaves the resonance, a complex k0, unchanged (common practice for
//! complex scaling, no single source). The discretisation is the
//! conservative one: fluxes (r̃_{i+1}E_{i+1} − r̃_i E_i)/(r̃_{i+½}Δr̃) on the
//! half points, ε_r the r-weighted arithmetic mean over each node's dual
//! cell (exact for E_φ, tangential to every face), E = 0 on the axis and on
//! the outer ends, ∂E/∂z = 0 on the mid-plane (the PMC symmetry of TE01δ).
//! Its error is second order in the cell where faces lie on grid lines.
//! The solver is first checked against the exact TE1 and TM1 modes of a
//! sphere.
mod common;

use common::{
    cylinder_eps, nearest_resonance, sphere_eps, stretched, A, EPS, HALF_H, LAYER, SPHERE_R,
};
use faer::c64;
use faer::sparse::Triplet;
use lathe_solver::exact::{sphere_mode, SphereFamily};

/// Mean of 1/ε_r of the cylinder along z ∈ [z0, z1] at radius r: exact.
fn cylinder_inv_along_z(r: f64, z0: f64, z1: f64) -> f64 {
    if r >= A {
        return 1.0;
    }
    let f = ((HALF_H.min(z1) - z0) / (z1 - z0)).clamp(0.0, 1.0);
    f / EPS + (1.0 - f)
}

/// Mean of 1/ε_r of the cylinder along r ∈ [r0, r1] at height z,
/// r-weighted: exact.
fn cylinder_inv_along_r(z: f64, r0: f64, r1: f64) -> f64 {
    if z >= HALF_H {
        return 1.0;
    }
    let area = |a: f64, b: f64| 0.5 * (b * b - a * a);
    let r0 = r0.max(0.0);
    let f = (area(r0, A.clamp(r0, r1)) / area(r0, r1)).clamp(0.0, 1.0);
    f / EPS + (1.0 - f)
}

/// Mean of 1/ε_r of the sphere along a segment, by a 256-point midpoint
/// rule (r-weighted along r).
fn sphere_inv(a: (f64, f64), b: (f64, f64)) -> f64 {
    let n = 256;
    let (mut w, mut s) = (0.0, 0.0);
    for k in 0..n {
        let t = (k as f64 + 0.5) / n as f64;
        let (r, z) = (a.0 + t * (b.0 - a.0), a.1 + t * (b.1 - a.1));
        let wt = if a.0 == b.0 { 1.0 } else { r };
        w += wt;
        s += wt
            * if r * r + z * z < SPHERE_R * SPHERE_R {
                1.0 / EPS
            } else {
                1.0
            };
    }
    s / w
}

fn sphere_inv_along_z(r: f64, z0: f64, z1: f64) -> f64 {
    sphere_inv((r, z0), (r, z1))
}

fn sphere_inv_along_r(z: f64, r0: f64, r1: f64) -> f64 {
    sphere_inv((r0.max(0.0), z), (r1, z))
}

/// The TE resonance nearest `f_guess` on cells of `h` for the permittivity
/// `eps_of` (its mean over a rectangle); see [`resonance`]. Returns (f, Q).
fn te0_resonance(h: f64, f_guess: f64, eps_of: fn(f64, f64, f64, f64) -> f64) -> (f64, f64) {
    resonance(h, f_guess, &Medium::Te(eps_of))
}

/// The medium as each family needs it.
enum Medium {
    /// TE (E_φ): ε_r's mean over a rectangle.
    Te(fn(f64, f64, f64, f64) -> f64),
    /// TM (H_φ): the means of 1/ε_r along a segment in z at fixed r
    /// (r, z0, z1) and along a segment in r at fixed z (z, r0, r1),
    /// r-weighted.
    Tm(fn(f64, f64, f64) -> f64, fn(f64, f64, f64) -> f64),
}

/// The resonance of the TE (E_φ) or TM (H_φ) family nearest `f_guess`; see
/// [`te0_resonance`]. For TM the unknown is H_φ, the fluxes carry 1/ε_r at
/// their points (the mean along the E component's own direction: E_z
/// normal to a z face, E_r normal to an r face), the mass is 1, H_φ = 0 on
/// the axis and the outer ends, ∂H_φ/∂z = 0 on a PEC mid-plane.
///
/// The scaling is [`common::LAYER`]. Inverse iteration with the shift
/// σ = (2π f_guess/c)² must settle (λ stable to 1e-13) within 200
/// iterations, or the test fails. Returns (f, Q).
fn resonance(h: f64, f_guess: f64, medium: &Medium) -> (f64, f64) {
    let (r0, z0, d, beta) = LAYER;
    let nr = ((r0 + d) / h).round() as usize; // E = 0 at i = 0 and i = nr
    let nz = ((z0 + d) / h).round() as usize; // ∂E/∂z = 0 at j = 0, E = 0 at j = nz
    let rt = |x: f64| stretched(x, r0, d, beta);
    let zt = |x: f64| stretched(x, z0, d, beta);
    // Unknowns: i = 1..nr−1, j = 0..nz−1.
    let ni = nr - 1;
    let idx = |i: usize, j: usize| (i - 1) + ni * j;
    let n = ni * nz;
    let mut a: Vec<Triplet<usize, usize, c64>> = Vec::with_capacity(5 * n);
    let mut eps = vec![0.0; n];
    for j in 0..nz {
        for i in 1..nr {
            let (r, z) = (i as f64 * h, j as f64 * h);
            let row = idx(i, j);
            // Flux factors: 1/ε_r at the four flux points for TM, 1 for TE.
            let (kp, km, gp_k, gm_k) = match medium {
                Medium::Te(eps_of) => {
                    eps[row] = eps_of(
                        r - 0.5 * h,
                        r + 0.5 * h,
                        (z - 0.5 * h).max(0.0),
                        z + 0.5 * h,
                    );
                    (1.0, 1.0, 1.0, 1.0)
                }
                Medium::Tm(along_z, along_r) => {
                    eps[row] = 1.0;
                    let zlo = (z - 0.5 * h).max(0.0);
                    (
                        along_z(r + 0.5 * h, zlo, z + 0.5 * h),
                        along_z(r - 0.5 * h, zlo, z + 0.5 * h),
                        along_r(z + 0.5 * h, r - 0.5 * h, r + 0.5 * h),
                        if j == 0 {
                            0.0
                        } else {
                            along_r(z - 0.5 * h, r - 0.5 * h, r + 0.5 * h)
                        },
                    )
                }
            };
            // Radial part: −(F_{i+½} − F_{i−½})/Δr̃_i.
            let (rm, rc, rp) = (rt(r - h), rt(r), rt(r + h));
            let (hm, hp) = (rt(r - 0.5 * h), rt(r + 0.5 * h));
            let dual = hp - hm;
            let cp = kp / (hp * (rp - rc) * dual);
            let cm = km / (hm * (rc - rm) * dual);
            // F_{i+½} = (r̃_{i+1}E_{i+1} − r̃_i E_i)/(r̃_{i+½}Δr̃_{i+½}).
            let mut diag = cp * rc + cm * rc;
            if i + 1 < nr {
                a.push(Triplet::new(row, idx(i + 1, j), -cp * rp));
            }
            if i > 1 {
                a.push(Triplet::new(row, idx(i - 1, j), -cm * rm));
            }
            // Axial part: −(G_{j+½} − G_{j−½})/Δz̃_j, G = ∂E/∂z̃.
            let (zc, zp) = (zt(z), zt(z + h));
            let zhp = zt(z + 0.5 * h);
            if j == 0 {
                // Mirror plane: the dual cell is the half [0, h/2], G_{−½} = 0.
                let g = gp_k / ((zp - zc) * (zhp - zc));
                diag += g;
                a.push(Triplet::new(row, idx(i, 1), -g));
            } else {
                let (zm, zhm) = (zt(z - h), zt(z - 0.5 * h));
                let dual = zhp - zhm;
                let gp = gp_k / ((zp - zc) * dual);
                let gm = gm_k / ((zc - zm) * dual);
                diag += gp + gm;
                if j + 1 < nz {
                    a.push(Triplet::new(row, idx(i, j + 1), -gp));
                }
                a.push(Triplet::new(row, idx(i, j - 1), -gm));
            }
            a.push(Triplet::new(row, row, diag));
        }
    }
    // Shift and invert: (A − σ E) y = E x.
    nearest_resonance(&a, &eps, f_guess, 1e-13, 200, &format!("h {h:e}"))
}

/// (f, Q) on cells of 0.1 mm and 0.05 mm.
fn two_grids(f_guess: f64, eps_of: fn(f64, f64, f64, f64) -> f64) -> [(f64, f64); 2] {
    [0.1e-3, 0.05e-3].map(|h| te0_resonance(h, f_guess, eps_of))
}

#[test]
fn the_eigen_solver_finds_the_exact_te1_mode_of_a_sphere() {
    // Exact TE1 of the ε_r 38 sphere of radius 4.7 mm (Stratton 1941;
    // Gastine, Courtois & Dormann 1967; lathe_solver::exact::sphere). For
    // m = 0 it is even about the mid-plane, as TE01δ is.
    let x = sphere_mode(SphereFamily::Te, 1, EPS, SPHERE_R).expect("the TE1 root");
    let v = two_grids(x.freq_hz, sphere_eps);
    let (df, dq) = (v[1].0 / x.freq_hz - 1.0, v[1].1 / x.q - 1.0);
    eprintln!(
        "sphere TE1: h 0.1 mm {:.6} GHz Q {:.3}; h 0.05 mm {:.6} GHz ({:+.4} %) Q {:.3} ({:+.3} %); exact {:.6} GHz Q {:.3}",
        v[0].0 / 1e9,
        v[0].1,
        v[1].0 / 1e9,
        100.0 * df,
        v[1].1,
        100.0 * dq,
        x.freq_hz / 1e9,
        x.q
    );
    // Measured −0.001 % and +0.007 % (the curved surface makes the
    // convergence irregular, so no extrapolation); tolerances 0.01 % in f
    // and 0.1 % in Q, ten times the measured or more.
    assert!(df.abs() < 1e-4, "f off {df:e}");
    assert!(dq.abs() < 1e-3, "Q off {dq:e}");
}

#[test]
fn the_eigen_solver_finds_the_exact_tm1_mode_of_a_sphere() {
    // Exact TM1 of the same sphere (same sources); for m = 0 its H_φ is
    // even about a PEC mid-plane. E is normal to the surface here, and the
    // directional means are first order on a curved surface: measured
    // +0.35 % and +0.19 % in f, −1.7 % and −0.99 % in Q at 0.1 and 0.05 mm.
    // Extrapolated at first order, (2φ(h/2) − φ(h)): tolerances f 0.1 %,
    // Q 1 % (measured +0.03 %, −0.25 %).
    let x = sphere_mode(SphereFamily::Tm, 1, EPS, SPHERE_R).expect("the TM1 root");
    let tm = Medium::Tm(sphere_inv_along_z, sphere_inv_along_r);
    let v = [0.1e-3, 0.05e-3].map(|h| resonance(h, x.freq_hz, &tm));
    let (f, q) = (2.0 * v[1].0 - v[0].0, 2.0 * v[1].1 - v[0].1);
    let (df, dq) = (f / x.freq_hz - 1.0, q / x.q - 1.0);
    eprintln!(
        "sphere TM1: h 0.1 mm {:.6} GHz Q {:.3}; h 0.05 mm {:.6} GHz Q {:.3}; first-order extrapolation {:.6} GHz ({:+.4} %) Q {:.3} ({:+.3} %); exact {:.6} GHz Q {:.3}",
        v[0].0 / 1e9,
        v[0].1,
        v[1].0 / 1e9,
        v[1].1,
        f / 1e9,
        100.0 * df,
        q,
        100.0 * dq,
        x.freq_hz / 1e9,
        x.q
    );
    assert!(df.abs() < 1e-3, "f off {df:e}");
    assert!(dq.abs() < 1e-2, "Q off {dq:e}");
}

/// Holds the finest of two grids' (f, Q) (cells `h`) against lathe's
/// converged answer within `tol` (f, Q), after the change between the grids
/// stayed within `settled`; prints the difference to the value recalled for
/// the published table (Kajfez, Glisson & James 1984; shared/physics.md §5,
/// from memory), which is not asserted until the table is re-read.
fn check_cylinder(
    name: &str,
    (v, h): ([(f64, f64); 2], [f64; 2]),
    (settled, tol): ((f64, f64), (f64, f64)),
    lathe: (f64, f64),
    table: (f64, f64),
) {
    let (f, q) = v[1];
    let (cf, cq) = (f / v[0].0 - 1.0, q / v[0].1 - 1.0);
    eprintln!(
        "cylinder {name}: h {} mm {:.6} GHz Q {:.3}; h {} mm {:.6} GHz Q {:.3} (change {:+.4} %, {:+.3} %); \
         against the recalled table: f {:+.2} %, Q {:+.1} %",
        h[0] * 1e3,
        v[0].0 / 1e9,
        v[0].1,
        h[1] * 1e3,
        f / 1e9,
        q,
        100.0 * cf,
        100.0 * cq,
        100.0 * (f / table.0 - 1.0),
        100.0 * (q / table.1 - 1.0)
    );
    assert!(
        cf.abs() < settled.0 && cq.abs() < settled.1,
        "{name}: grids disagree"
    );
    assert!((f / lathe.0 - 1.0).abs() < tol.0, "{name}: f {f}");
    assert!((q / lathe.1 - 1.0).abs() < tol.1, "{name}: Q {q}");
}

// lathe's converged time-domain answers below: solver/benches/RESULTS.md
// §2 (region ±24 mm, 40 cells per wavelength, 7.46 G cell updates). The two
// methods share nothing but the physics.

#[test]
fn tm01_of_the_benchmark_cylinder_by_an_independent_eigen_solver() {
    // Faces on grid lines at 0.05 and 0.025 mm (0.1 mm puts a flux point on
    // the side face). The change between the two bounds the grid's error;
    // the 90° edges, where E is normal, keep it from second order.
    // Tolerances against lathe: f 0.1 %, Q 1 %.
    let tm = Medium::Tm(cylinder_inv_along_z, cylinder_inv_along_r);
    let h = [0.05e-3, 0.025e-3];
    let v = h.map(|h| resonance(h, 7.531e9, &tm));
    check_cylinder(
        "TM01δ",
        (v, h),
        ((1e-4, 3e-3), (1e-3, 1e-2)),
        (7.5310e9, 77.30),
        (7.524e9, 76.8),
    );
}

#[test]
fn te01_of_the_benchmark_cylinder_by_an_independent_eigen_solver() {
    // At 0.05 mm every face lies on a grid line; the change from 0.1 mm
    // (faces averaged) bounds the grid's error. Tolerances against lathe:
    // f 0.05 %, Q 1 %.
    let v = two_grids(4.857e9, cylinder_eps);
    let h = [0.1e-3, 0.05e-3];
    check_cylinder(
        "TE01δ",
        (v, h),
        ((1e-4, 1e-3), (5e-4, 1e-2)),
        (4.8565e9, 40.84),
        (4.829e9, 45.8),
    );
}
