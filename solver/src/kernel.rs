//! The leapfrog update of one azimuthal order: the physics of every line.
//!
//! With E_r, E_z, H_φ ∝ cos mφ and E_φ, H_r, H_z ∝ sin mφ, Maxwell's curl
//! equations in a medium ε = ε0 ε_r, μ = μ0 become, for the real (r, z)
//! coefficients,
//!
//! ```text
//! ε ∂t e_r = (m/r) h_z − ∂z h_φ        μ ∂t h_r =  (m/r) e_z + ∂z e_φ
//! ε ∂t e_φ = ∂z h_r − ∂r h_z           μ ∂t h_φ = −∂z e_r + ∂r e_z
//! ε ∂t e_z = (1/r) ∂r(r h_φ) − (m/r) h_r
//!                                      μ ∂t h_z = −(1/r) ∂r(r e_φ) − (m/r) e_r
//! ```
//!
//! (a sign-consistent choice of the cos/sin split; Taflove & Hagness,
//! *Computational Electrodynamics* 3rd ed., ch. 12). On the staggered grid of
//! [`lathe_mesh::Component`] every term is a centred difference or a
//! co-located value. H is advanced from t_n to t_{n+½} by
//! [`update_h`], then E from t_n to t_{n+1} by [`update_e`].
//!
//! # Finite-integration form
//! The radial differences carry the radii, e.g. at H_z(i+½):
//! `(r_{i+1} e_φ(i+1) − r_i e_φ(i)) / (r_{i+½} Δr)`, which is Faraday's law
//! integrated over the annulus `r_i … r_{i+1}`. With node weights equal to
//! their radius (the volume element r dr dz) the discrete E-from-H operator
//! is then exactly the adjoint of the H-from-E operator. The scheme is
//! therefore energy-conserving and stable up to Δt = 2/√λ_max of the
//! discrete curl-curl operator, which [`crate::stability`] computes.
//!
//! # The axis r = 0
//! Regularity (E_z, H_z ∝ r^m; transverse components ∝ r^{m−1}) gives:
//! - **m = 0**: only E_z survives on the axis. It is advanced by Ampère's
//!   law on the disc of radius Δr/2: ε ∂t e_z(0) · π(Δr/2)² = 2π(Δr/2) h_φ(½),
//!   i.e. ε ∂t e_z(0) = 4 h_φ(½)/Δr. E_φ(0) and H_r(0) are zero.
//! - **m = 1**: E_z(0) = 0. E_φ(0) and H_r(0) are finite but are multiplied
//!   by r_0 = 0 wherever they would enter an off-axis update, so they are
//!   not unknowns of the scheme; single-valuedness of the Cartesian field on
//!   the axis gives them as e_φ(0) = −e_r(0) and h_r(0) = h_φ(0), which
//!   [`fill_axis`] evaluates (second order, from the even extension of e_r
//!   and h_φ across the axis) when fields are read out.
//! - **m ≥ 2**: every axis value is zero.
//!
//! The off-axis H_z(½) update uses the full annulus `0 … Δr` (its inner
//! coefficient is zero), so no axis value is needed there either.
//!
//! # Threads
//! Rows are independent within each half step, so large grids are updated
//! row-parallel (rayon) when [`Coefficients::row_parallel`] is set; every
//! entry is computed by the same expression on any thread, so results are
//! bitwise identical for any thread count.
//!
//! # Walls
//! PEC walls hold their tangential E nodes at zero (`cb = 0`, set in
//! [`crate::coefficients`]); a PMC z plane uses the odd image of tangential
//! H in the Ampère update of the E nodes on the plane.
use crate::boundary::ZWall;
use crate::coefficients::Coefficients;
use crate::fields::Fields;
use rayon::prelude::*;

/// Applies `f(i, row)` to rows `lo..hi` of `data` (rows of `len` entries),
/// in parallel when `par` is set. Each entry is computed by the same
/// arithmetic whichever thread does it, so results do not depend on the
/// thread count.
fn rows<F>(data: &mut [f64], len: usize, lo: usize, hi: usize, par: bool, f: F)
where
    F: Fn(usize, &mut [f64]) + Sync + Send,
{
    if hi <= lo {
        return;
    }
    let sub = &mut data[lo * len..hi * len];
    if par {
        sub.par_chunks_mut(len)
            .with_min_len(4)
            .enumerate()
            .for_each(|(k, row)| f(lo + k, row));
    } else {
        sub.chunks_mut(len)
            .enumerate()
            .for_each(|(k, row)| f(lo + k, row));
    }
}

/// Advances H by one step from E (Faraday's law).
pub fn update_h(f: &mut Fields, c: &Coefficients) {
    let (nr, nz) = (c.nr, c.nz);
    let (ch, idr, idz, par) = (c.ch, c.inv_dr, c.inv_dz, c.row_parallel);
    let nj1 = nz + 1;
    let Fields {
        er,
        ephi,
        ez,
        hr,
        hphi,
        hz,
        ..
    } = f;
    let (er, ephi, ez) = (&er[..], &ephi[..], &ez[..]);
    // μ ∂t h_r = (m/r) e_z + ∂z e_φ, rows 1..nr (the axis row is derived,
    // the outer-wall row is normal H on a PEC wall and stays zero).
    rows(hr, nz, 1, nr, par, |i, hr| {
        let mr = c.m_over_r_int[i];
        let ez = &ez[i * nz..(i + 1) * nz];
        let ep = &ephi[i * nj1..(i + 1) * nj1];
        for j in 0..nz {
            hr[j] += ch * (mr * ez[j] + (ep[j + 1] - ep[j]) * idz);
        }
    });
    // μ ∂t h_φ = −∂z e_r + ∂r e_z.
    rows(hphi, nz, 0, nr, par, |i, hp| {
        let er = &er[i * nj1..(i + 1) * nj1];
        let ez0 = &ez[i * nz..(i + 1) * nz];
        let ez1 = &ez[(i + 1) * nz..(i + 2) * nz];
        for j in 0..nz {
            hp[j] += ch * ((ez1[j] - ez0[j]) * idr - (er[j + 1] - er[j]) * idz);
        }
    });
    // μ ∂t h_z = −(1/r) ∂r(r e_φ) − (m/r) e_r.
    rows(hz, nj1, 0, nr, par, |i, hz| {
        let (a, b, mr) = (c.hz_out[i], c.hz_in[i], c.m_over_r_half[i]);
        let ep0 = &ephi[i * nj1..(i + 1) * nj1];
        let ep1 = &ephi[(i + 1) * nj1..(i + 2) * nj1];
        let er = &er[i * nj1..(i + 1) * nj1];
        for j in 0..nj1 {
            hz[j] -= ch * (a * ep1[j] - b * ep0[j] + mr * er[j]);
        }
    });
}

/// Advances E by one step from H (Ampère's law, no sources).
pub fn update_e(f: &mut Fields, c: &Coefficients) {
    let (nr, nz) = (c.nr, c.nz);
    let (idr, idz, par) = (c.inv_dr, c.inv_dz, c.row_parallel);
    let nj1 = nz + 1;
    // Odd image of tangential H across a PMC plane; across a PEC plane the
    // E node is held (cb = 0) and the value is irrelevant.
    let img = |w: ZWall| if w == ZWall::Pmc { -1.0 } else { 0.0 };
    let (ib, it) = (img(c.bottom), img(c.top));
    let Fields {
        er,
        ephi,
        ez,
        hr,
        hphi,
        hz,
        ..
    } = f;
    let (hr, hphi, hz) = (&hr[..], &hphi[..], &hz[..]);
    // ε ∂t e_r = (m/r) h_z − ∂z h_φ.
    rows(er, nj1, 0, nr, par, |i, er| {
        let mr = c.m_over_r_half[i];
        let cb = &c.cb_er[i * nj1..(i + 1) * nj1];
        let hz = &hz[i * nj1..(i + 1) * nj1];
        let hp = &hphi[i * nz..(i + 1) * nz];
        er[0] += cb[0] * (mr * hz[0] - (hp[0] - ib * hp[0]) * idz);
        for j in 1..nz {
            er[j] += cb[j] * (mr * hz[j] - (hp[j] - hp[j - 1]) * idz);
        }
        er[nz] += cb[nz] * (mr * hz[nz] - (it * hp[nz - 1] - hp[nz - 1]) * idz);
    });
    // ε ∂t e_φ = ∂z h_r − ∂r h_z, rows 1..nr (axis derived, outer wall held).
    rows(ephi, nj1, 1, nr, par, |i, ep| {
        let cb = &c.cb_ephi[i * nj1..(i + 1) * nj1];
        let hr = &hr[i * nz..(i + 1) * nz];
        let hz0 = &hz[(i - 1) * nj1..i * nj1];
        let hz1 = &hz[i * nj1..(i + 1) * nj1];
        ep[0] += cb[0] * ((hr[0] - ib * hr[0]) * idz - (hz1[0] - hz0[0]) * idr);
        for j in 1..nz {
            ep[j] += cb[j] * ((hr[j] - hr[j - 1]) * idz - (hz1[j] - hz0[j]) * idr);
        }
        ep[nz] += cb[nz] * ((it * hr[nz - 1] - hr[nz - 1]) * idz - (hz1[nz] - hz0[nz]) * idr);
    });
    // ε ∂t e_z = (1/r) ∂r(r h_φ) − (m/r) h_r, rows 1..nr.
    rows(ez, nz, 1, nr, par, |i, ez| {
        let (a, b, mr) = (c.ez_out[i], c.ez_in[i], c.m_over_r_int[i]);
        let cb = &c.cb_ez[i * nz..(i + 1) * nz];
        let hp0 = &hphi[(i - 1) * nz..i * nz];
        let hp1 = &hphi[i * nz..(i + 1) * nz];
        let hr = &hr[i * nz..(i + 1) * nz];
        for j in 0..nz {
            ez[j] += cb[j] * (a * hp1[j] - b * hp0[j] - mr * hr[j]);
        }
    });
    // Axis, m = 0 only (cb is zero on the axis for m ≥ 1):
    // ε ∂t e_z(0) = 4 h_φ(½)/Δr.
    if c.m == 0 {
        let cb = &c.cb_ez[0..nz];
        let hp = &hphi[0..nz];
        let ez = &mut ez[0..nz];
        for j in 0..nz {
            ez[j] += cb[j] * 4.0 * idr * hp[j];
        }
    }
    // Off-diagonal permittivity at curved interfaces (few nodes).
    if let Some(cp) = &c.coupling {
        for (l, taps) in &cp.er {
            let s: f64 = taps.iter().map(|&(k, w)| w * curl_z(hr, hphi, c, k)).sum();
            er[*l] += s;
        }
        for (k, taps) in &cp.ez {
            let s: f64 = taps.iter().map(|&(l, w)| w * curl_r(hphi, hz, c, l)).sum();
            ez[*k] += s;
        }
    }
}

/// (∇×H)_z at E_z node `k` as in [`update_e`] (without the 1/ε factor).
fn curl_z(hr: &[f64], hphi: &[f64], c: &Coefficients, k: usize) -> f64 {
    let nz = c.nz;
    let (i, j) = (k / nz, k % nz);
    if i == 0 {
        return 4.0 * c.inv_dr * hphi[j];
    }
    c.ez_out[i] * hphi[i * nz + j]
        - c.ez_in[i] * hphi[(i - 1) * nz + j]
        - c.m_over_r_int[i] * hr[i * nz + j]
}

/// (∇×H)_r at E_r node `l` as in [`update_e`], with the PMC images.
fn curl_r(hphi: &[f64], hz: &[f64], c: &Coefficients, l: usize) -> f64 {
    let (nz, nj1) = (c.nz, c.nz + 1);
    let (i, j) = (l / nj1, l % nj1);
    let img = |w: ZWall| if w == ZWall::Pmc { -1.0 } else { 0.0 };
    let above = if j < nz {
        hphi[i * nz + j]
    } else {
        img(c.top) * hphi[i * nz + nz - 1]
    };
    let below = if j > 0 {
        hphi[i * nz + j - 1]
    } else {
        img(c.bottom) * hphi[i * nz]
    };
    c.m_over_r_half[i] * hz[l] - (above - below) * c.inv_dz
}

/// Writes the derived axis values of order m = 1 (e_φ(0) = −e_r(0),
/// h_r(0) = h_φ(0), with e_r and h_φ extrapolated to r = 0 from their even
/// extension: f(0) ≈ (9 f(½Δr) − f(3/2 Δr))/8, error O(Δr²)). For other
/// orders the axis values are already right (zero, or advanced for m = 0).
pub fn fill_axis(f: &mut Fields, m: u32) {
    if m != 1 {
        return;
    }
    let (nr, nz) = (f.nr, f.nz);
    let nj1 = nz + 1;
    let at0 = |a: f64, b: f64| if nr >= 2 { (9.0 * a - b) / 8.0 } else { a };
    for j in 0..nj1 {
        let b = if nr >= 2 { f.er[nj1 + j] } else { 0.0 };
        f.ephi[j] = -at0(f.er[j], b);
    }
    for j in 0..nz {
        let b = if nr >= 2 { f.hphi[nz + j] } else { 0.0 };
        f.hr[j] = at0(f.hphi[j], b);
    }
}
