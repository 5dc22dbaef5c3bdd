//! Dielectric loss by perturbation: the Q a mode has once its bodies'
//! loss tangents are taken into account.
//!
//! The time stepping is lossless. For low-loss dielectrics (tan δ ≪ 1) the
//! loss enters to first order through the electric energy each lossy body
//! holds (the standard perturbation result; e.g. Kajfez & Guillon,
//! *Dielectric Resonators*, 1986, ch. 1, and the filling-factor form used in
//! resonator metrology):
//!
//! ```text
//! 1/Q_u = 1/Q_0 + Σ_i p_i tan δ_i,    p_i = W_e,i / W_e
//! ```
//!
//! with Q_0 the lossless Q (radiation, or the lower bound of a closed
//! lossless structure), W_e,i the time-average electric energy inside body i
//! and W_e the electric energy of the mode. Both energies are sums of
//! ε0 ε_r |E|² over the electric nodes of the mode's field (each component
//! on its own Yee position, volume weight r Δr Δz; the azimuthal factor, 2π
//! for m = 0 and π for m ≥ 1, cancels in the ratio), over the physical
//! region only (absorber cells excluded). A node belongs to the last body
//! whose shape contains it (a node on a surface is shared equally between
//! its sides), so p_i is first-order accurate at a curved surface. For a radiating mode W_e also counts some energy of the
//! outgoing wave inside the region, which lowers p_i by about the
//! fraction of energy outside the bodies at the region's edge — negligible
//! for high-Q modes, a few per cent at most for Q ≈ 10, where radiation
//! dominates the loss anyway.
use lathe_mesh::{Body, Component, Material};
use lathe_solver::RunOutput;

/// The dielectric-loss figures of one mode.
#[derive(Debug, Clone, PartialEq)]
pub struct LossQ {
    /// Electric filling factor p_i of each body (file order; 0 for metal).
    pub filling: Vec<f64>,
    /// Q of the dielectric loss alone, 1/Σ p_i tan δ_i (∞ when lossless).
    pub q_dielectric: f64,
    /// Q with the loss: 1/(1/Q_0 + 1/Q_d).
    pub q_with_loss: f64,
}

/// Whether any body has a non-zero loss tangent.
pub fn any_lossy(bodies: &[Body]) -> bool {
    bodies.iter().any(
        |b| matches!(b.material, Material::Dielectric { loss_tangent, .. } if loss_tangent > 0.0),
    )
}

/// The loss figures of mode `k` of `run` whose bodies are `bodies` (the
/// scenario's, in file order), or `None` when the mode has no field.
pub fn loss_q(bodies: &[Body], run: &RunOutput, k: usize) -> Option<LossQ> {
    let field = run.mode_fields.get(k)?.as_ref()?;
    let q0 = run.modes.get(k)?.q;
    let g = &run.grid;
    let r_max = g.radius() - run.walls.outer.cells() as f64 * g.dr;
    let z_lo = g.z0 + run.walls.bottom.cells() as f64 * g.dz;
    let z_hi = g.z_top() - run.walls.top.cells() as f64 * g.dz;
    let tol = 1e-9 * (g.dr + g.dz);
    let inside = |r: f64, z: f64| r <= r_max + tol && z >= z_lo - tol && z <= z_hi + tol;
    let owner = |r: f64, z: f64| bodies.iter().rposition(|b| b.shape.contains(r, z, 0.0));
    let mut total = 0.0;
    let mut per_body = vec![0.0; bodies.len()];
    for c in [Component::Er, Component::Ephi, Component::Ez] {
        let u = field.get(c);
        let (ni, nj) = match c {
            Component::Er => (g.nr, g.nz + 1),
            Component::Ephi => (g.nr + 1, g.nz + 1),
            _ => (g.nr + 1, g.nz),
        };
        for i in 0..ni {
            let r = match c {
                Component::Er => g.r_half(i),
                _ => g.r_int(i),
            };
            // Volume weight r Δr Δz; the axis node of E_z and E_φ stands for
            // the disk of radius Δr/2 (area-equivalent radius Δr/8).
            let w = if i == 0 && c != Component::Er {
                g.dr / 8.0
            } else {
                r
            };
            for j in 0..nj {
                let z = match c {
                    Component::Ez => g.z_half(j),
                    _ => g.z_int(j),
                };
                if !inside(r, z) {
                    continue;
                }
                // A node on a surface is shared between the two sides: the
                // owner is taken at four points a millionth of a cell away.
                let (er, ez) = (1e-6 * g.dr, 1e-6 * g.dz);
                for (rr, zz) in [
                    (r + er, z + ez),
                    (r + er, z - ez),
                    (r - er, z + ez),
                    (r - er, z - ez),
                ] {
                    let own = owner(rr.max(0.0), zz);
                    let eps = match own.map(|b| bodies[b].material) {
                        Some(Material::Dielectric { eps_r, .. }) => eps_r,
                        Some(Material::Pec) => continue,
                        None => 1.0,
                    };
                    let e = 0.25 * w * eps * u[i * nj + j].norm_sqr();
                    total += e;
                    if let Some(b) = own {
                        per_body[b] += e;
                    }
                }
            }
        }
    }
    if !(total > 0.0 && total.is_finite()) {
        return None;
    }
    let filling: Vec<f64> = per_body.iter().map(|e| e / total).collect();
    let inv_qd: f64 = bodies
        .iter()
        .zip(&filling)
        .map(|(b, p)| match b.material {
            Material::Dielectric { loss_tangent, .. } => p * loss_tangent,
            Material::Pec => 0.0,
        })
        .sum();
    let q_dielectric = if inv_qd > 0.0 {
        1.0 / inv_qd
    } else {
        f64::INFINITY
    };
    let q_with_loss = 1.0 / (1.0 / q0 + inv_qd);
    Some(LossQ {
        filling,
        q_dielectric,
        q_with_loss,
    })
}
