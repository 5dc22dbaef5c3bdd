//! What the two frequency-domain eigen-solvers (`m0_eigen.rs`,
//! `hem_eigen.rs`) share: the benchmark cylinder and the test sphere as
//! r-weighted means of ε_r, the complex scaling profile, and shift-and-invert
//! inverse iteration on a sparse LU.
#![allow(dead_code)] // each test binary uses its own part

use faer::sparse::{SparseColMat, Triplet};
use faer::{c64, Col};
use std::f64::consts::PI;

pub const C0: f64 = 299_792_458.0;
/// The benchmark cylinder: radius and half height (the half above the
/// mid-plane is solved), ε_r.
pub const A: f64 = 5.25e-3;
pub const HALF_H: f64 = 2.3e-3;
pub const EPS: f64 = 38.0;
/// The test sphere's radius (same ε_r), centred on the mid-plane.
pub const SPHERE_R: f64 = 4.7e-3;

/// ε_r of the cylinder averaged over [r0, r1] × [z0, z1], r-weighted (the
/// cylinder is the rectangle r < A, z < HALF_H of the half plane above the
/// mid-plane): exact.
pub fn cylinder_eps(r0: f64, r1: f64, z0: f64, z1: f64) -> f64 {
    let area = |a: f64, b: f64| 0.5 * (b * b - a * a);
    let total = area(r0, r1) * (z1 - z0);
    let (ri, zi) = (r1.min(A).max(r0), z1.min(HALF_H).max(z0));
    let inside = area(r0, ri) * (zi - z0);
    (inside * EPS + (total - inside)) / total
}

/// ε_r of the sphere averaged likewise: exact away from the surface, a
/// 128 × 128 midpoint rule in cells it cuts.
pub fn sphere_eps(r0: f64, r1: f64, z0: f64, z1: f64) -> f64 {
    let rr = SPHERE_R * SPHERE_R;
    if r1 * r1 + z1 * z1 <= rr {
        return EPS;
    }
    if r0 * r0 + z0 * z0 >= rr {
        return 1.0;
    }
    let n = 128;
    let (dr, dz) = ((r1 - r0) / n as f64, (z1 - z0) / n as f64);
    let (mut w, mut we) = (0.0, 0.0);
    for a in 0..n {
        let r = r0 + (a as f64 + 0.5) * dr;
        for b in 0..n {
            let z = z0 + (b as f64 + 0.5) * dz;
            w += r;
            we += r * if r * r + z * z < rr { EPS } else { 1.0 };
        }
    }
    we / w
}

/// The complex scaling: it starts at r = 9 mm and z = 7 mm and runs over
/// 6 mm with β_max 60, so the field falls by e^{−k0·Im r̃} ≈ e^{−12} at
/// the end. Moving the layer out to 12 and 10 mm, or in to 7 and 5 mm,
/// deepening it to 9 mm, or taking β_max 30 or 120 changed f by less than
/// 3e-6 and Q by less than 2e-4 (TE01δ in `m0_eigen.rs`, measured by hand).
/// For `hem_eigen.rs` at 0.05 mm (HEM11δ, HEM12δ, HEM21δ), moving it out to
/// 12 and 10 mm, deepening it to 9 mm, or taking β_max 30 or 120 changed f by
/// less than 2e-7 and Q by less than 4e-5 (HEM21δ 337.361 … 337.382 against
/// 337.374; measured by hand, 2026-12-02).
pub const LAYER: (f64, f64, f64, f64) = (9e-3, 7e-3, 6e-3, 60.0);

/// Stretched coordinate at `x` for a layer from `x0` of depth `d`:
/// x − j·βmax·d·((x − x0)/d)³/3 (e^{jωt}: an outgoing e^{−jk r̃} decays).
pub fn stretched(x: f64, x0: f64, d: f64, beta: f64) -> c64 {
    let t = ((x - x0) / d).max(0.0);
    c64::new(x, -beta * d * t * t * t / 3.0)
}

/// The eigenvalue λ = k0² of A x = λ M x nearest σ = (2π f_guess/c)², by
/// inverse iteration on the LU of A − σM; `a` holds A's entries (duplicates
/// summed) and `mass` M's diagonal. It must settle (λ stable to `tol`)
/// within `max_iter` iterations, or the test fails. Returns (f, Q) with
/// Q = Re ω / (2 |Im ω|).
pub fn nearest_resonance(
    a: &[Triplet<usize, usize, c64>],
    mass: &[f64],
    f_guess: f64,
    tol: f64,
    max_iter: usize,
    what: &str,
) -> (f64, f64) {
    let n = mass.len();
    let k_guess = 2.0 * PI * f_guess / C0;
    let sigma = k_guess * k_guess;
    let mut shifted = a.to_vec();
    for (row, e) in mass.iter().enumerate() {
        shifted.push(Triplet::new(row, row, c64::new(-sigma * e, 0.0)));
    }
    let m = SparseColMat::<usize, c64>::try_new_from_triplets(n, n, &shifted).expect("a matrix");
    let lu = m.sp_lu().expect("an LU factorisation");
    use faer::linalg::solvers::Solve;
    let mut x = Col::<c64>::from_fn(n, |k| c64::new(1.0 + (k % 7) as f64 * 0.1, 0.0));
    let mut lambda = c64::new(sigma, 0.0);
    let mut settled = false;
    for _ in 0..max_iter {
        let ex = Col::<c64>::from_fn(n, |k| x[k] * mass[k]);
        let y = lu.solve(&ex);
        // y ≈ x/(λ − σ): least squares for λ − σ.
        let (mut num, mut den) = (c64::new(0.0, 0.0), 0.0);
        for k in 0..n {
            num += y[k].conj() * x[k];
            den += y[k].norm_sqr();
        }
        let next = c64::new(sigma, 0.0) + num / den;
        let norm = (0..n).map(|k| y[k].norm_sqr()).sum::<f64>().sqrt();
        x = Col::<c64>::from_fn(n, |k| y[k] / norm);
        settled = (next - lambda).norm() < tol * next.norm();
        lambda = next;
        if settled {
            break;
        }
    }
    assert!(
        settled,
        "inverse iteration did not settle near {f_guess:e} Hz ({what})"
    );
    let w = lambda.sqrt() * C0;
    let (wr, wi) = (w.re.abs(), w.im.abs());
    (wr / (2.0 * PI), wr / (2.0 * wi))
}
