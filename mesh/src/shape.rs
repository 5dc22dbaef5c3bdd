//! Shapes of revolution, described by their profile in the (r, z) half-plane.

/// A solid of revolution about the z axis, given by its (r, z) profile.
/// Lengths in metres.
#[derive(Debug, Clone, PartialEq)]
pub enum Shape {
    /// Solid cylinder `0 ≤ r ≤ radius`, `base ≤ z ≤ base + height`.
    Cylinder {
        /// Radius.
        radius: f64,
        /// Height along z.
        height: f64,
        /// z of the bottom face.
        base: f64,
    },
    /// Annulus `inner_radius ≤ r ≤ outer_radius`, `base ≤ z ≤ base + height`.
    Ring {
        /// Inner radius (may be 0, which makes a cylinder).
        inner_radius: f64,
        /// Outer radius.
        outer_radius: f64,
        /// Height along z.
        height: f64,
        /// z of the bottom face.
        base: f64,
    },
    /// Frustum of a cone: radius `radius_bottom` at z = `base`, `radius_top`
    /// at z = `base + height`, straight in between (either radius may be 0).
    Cone {
        /// Radius of the bottom face.
        radius_bottom: f64,
        /// Radius of the top face.
        radius_top: f64,
        /// Height along z.
        height: f64,
        /// z of the bottom face.
        base: f64,
    },
    /// A closed profile in the half-plane r ≥ 0, vertices (r, z) in order
    /// (the last joins the first); the solid it sweeps about the axis.
    Polygon {
        /// Vertices (r, z).
        points: Vec<(f64, f64)>,
    },
    /// Solid sphere of `radius` centred on the axis at z = `center`. The part
    /// inside the region counts, so a sphere centred on a PEC bottom wall is
    /// a hemisphere on a ground plane.
    Sphere {
        /// Radius.
        radius: f64,
        /// z of the centre.
        center: f64,
    },
}

impl Shape {
    /// Bounding box `(r_min, r_max, z_min, z_max)` of the profile.
    pub fn bounds(&self) -> (f64, f64, f64, f64) {
        match *self {
            Shape::Cylinder {
                radius,
                height,
                base,
            } => (0.0, radius, base, base + height),
            Shape::Ring {
                inner_radius,
                outer_radius,
                height,
                base,
            } => (inner_radius, outer_radius, base, base + height),
            Shape::Sphere { radius, center } => (0.0, radius, center - radius, center + radius),
            Shape::Cone { .. } | Shape::Polygon { .. } => {
                let pts = self.profile();
                let (mut a, mut b, mut c, mut d) = (
                    f64::INFINITY,
                    f64::NEG_INFINITY,
                    f64::INFINITY,
                    f64::NEG_INFINITY,
                );
                for &(r, z) in &pts {
                    a = a.min(r);
                    b = b.max(r);
                    c = c.min(z);
                    d = d.max(z);
                }
                (a, b, c, d)
            }
        }
    }

    /// The profile as a polygon, for shapes with straight edges (empty for a
    /// sphere).
    pub fn profile(&self) -> Vec<(f64, f64)> {
        match self {
            Shape::Cylinder {
                radius,
                height,
                base,
            } => vec![
                (0.0, *base),
                (*radius, *base),
                (*radius, base + height),
                (0.0, base + height),
            ],
            Shape::Ring {
                inner_radius,
                outer_radius,
                height,
                base,
            } => vec![
                (*inner_radius, *base),
                (*outer_radius, *base),
                (*outer_radius, base + height),
                (*inner_radius, base + height),
            ],
            Shape::Cone {
                radius_bottom,
                radius_top,
                height,
                base,
            } => vec![
                (0.0, *base),
                (*radius_bottom, *base),
                (*radius_top, base + height),
                (0.0, base + height),
            ],
            Shape::Polygon { points } => points.clone(),
            Shape::Sphere { .. } => Vec::new(),
        }
    }

    /// Whether the profile is a rectangle of the (r, z) plane (cylinder,
    /// ring), for which averages over a rectangle are exact sums.
    pub fn is_rectangle(&self) -> bool {
        matches!(self, Shape::Cylinder { .. } | Shape::Ring { .. })
    }

    /// Whether the point `(r, z)` lies in the closed profile, widened by
    /// `slack` metres on every side (a small positive `slack` makes points on
    /// the surface count as inside; zero gives the exact closed set).
    pub fn contains(&self, r: f64, z: f64, slack: f64) -> bool {
        match *self {
            Shape::Sphere { radius, center } => {
                (r * r + (z - center) * (z - center)).sqrt() <= radius + slack
            }
            Shape::Cone { .. } | Shape::Polygon { .. } => {
                let pts = self.profile();
                let inside = point_in_polygon(&pts, r, z);
                if slack >= 0.0 {
                    inside || distance_to_edges(&pts, r, z) <= slack
                } else {
                    inside && distance_to_edges(&pts, r, z) >= -slack
                }
            }
            _ => {
                let (r0, r1, z0, z1) = self.bounds();
                r >= r0 - slack && r <= r1 + slack && z >= z0 - slack && z <= z1 + slack
            }
        }
    }

    /// Where the closed rectangle `[r0, r1] × [z0, z1]` lies relative to the
    /// profile: wholly inside, wholly outside, or cut by its surface.
    pub fn classify(&self, r0: f64, r1: f64, z0: f64, z1: f64) -> Overlap {
        if let Shape::Sphere { radius, center } = *self {
            // Nearest and farthest points of the rectangle from the centre
            // (0, center).
            let near_r = 0.0f64.clamp(r0, r1);
            let near_z = center.clamp(z0, z1);
            let near = (near_r * near_r + (near_z - center).powi(2)).sqrt();
            let far_r = r0.abs().max(r1.abs());
            let far_z = (z0 - center).abs().max((z1 - center).abs());
            let far = (far_r * far_r + far_z * far_z).sqrt();
            return if far <= radius {
                Overlap::Inside
            } else if near >= radius {
                Overlap::Outside
            } else {
                Overlap::Cut
            };
        }
        if matches!(self, Shape::Cone { .. } | Shape::Polygon { .. }) {
            let pts = self.profile();
            let corners = [(r0, z0), (r1, z0), (r1, z1), (r0, z1)];
            let inside = corners
                .iter()
                .filter(|c| point_in_polygon(&pts, c.0, c.1))
                .count();
            let crossing = (0..pts.len()).any(|k| {
                let (p, q) = (pts[k], pts[(k + 1) % pts.len()]);
                segment_meets_rect(p, q, (r0, r1, z0, z1))
            });
            return if crossing {
                Overlap::Cut
            } else if inside == 4 {
                Overlap::Inside
            } else if inside == 0 {
                Overlap::Outside
            } else {
                Overlap::Cut
            };
        }
        let (a0, a1, b0, b1) = self.bounds();
        if r1 <= a0 || r0 >= a1 || z1 <= b0 || z0 >= b1 {
            Overlap::Outside
        } else if r0 >= a0 && r1 <= a1 && z0 >= b0 && z1 <= b1 {
            Overlap::Inside
        } else {
            Overlap::Cut
        }
    }

    /// The surface point nearest to `(r, z)`: its distance and the unit
    /// normal of the surface there, or `None` where the normal is not
    /// defined by one face (the nearest point is a corner of the profile, or
    /// the point is the sphere's centre). Edges on the axis are not surface.
    pub fn surface_normal(&self, r: f64, z: f64) -> Option<(f64, (f64, f64))> {
        if let Shape::Sphere { radius, center } = *self {
            let rho = r.hypot(z - center);
            if rho == 0.0 {
                return None;
            }
            return Some(((rho - radius).abs(), (r / rho, (z - center) / rho)));
        }
        let pts = self.profile();
        let n = pts.len();
        let mut best: Option<(f64, Option<(f64, f64)>)> = None;
        for k in 0..n {
            let (a, b) = (pts[k], pts[(k + 1) % n]);
            if a.0 == 0.0 && b.0 == 0.0 {
                continue;
            }
            let (dx, dz) = (b.0 - a.0, b.1 - a.1);
            let len2 = dx * dx + dz * dz;
            if len2 == 0.0 {
                continue;
            }
            let t = ((r - a.0) * dx + (z - a.1) * dz) / len2;
            let tc = t.clamp(0.0, 1.0);
            let d = (a.0 + tc * dx - r).hypot(a.1 + tc * dz - z);
            let len = len2.sqrt();
            let normal = (t > 0.0 && t < 1.0).then_some((dz / len, -dx / len));
            if best.is_none_or(|(bd, _)| d < bd) {
                best = Some((d, normal));
            }
        }
        let (d, normal) = best?;
        normal.map(|nv| (d, nv))
    }

    /// The shape's name as written in scenario files.
    pub fn kind(&self) -> &'static str {
        match self {
            Shape::Cylinder { .. } => "cylinder",
            Shape::Ring { .. } => "ring",
            Shape::Sphere { .. } => "sphere",
            Shape::Cone { .. } => "cone",
            Shape::Polygon { .. } => "polygon",
        }
    }
}

/// Even-odd rule: whether (r, z) is inside the closed polygon.
fn point_in_polygon(pts: &[(f64, f64)], r: f64, z: f64) -> bool {
    let mut inside = false;
    let n = pts.len();
    for k in 0..n {
        let (a, b) = (pts[k], pts[(k + n - 1) % n]);
        if (a.1 > z) != (b.1 > z) {
            let x = a.0 + (z - a.1) * (b.0 - a.0) / (b.1 - a.1);
            if r < x {
                inside = !inside;
            }
        }
    }
    inside
}

/// Distance from (r, z) to the nearest edge of the polygon.
fn distance_to_edges(pts: &[(f64, f64)], r: f64, z: f64) -> f64 {
    let n = pts.len();
    (0..n)
        .map(|k| {
            let (a, b) = (pts[k], pts[(k + 1) % n]);
            let (dx, dz) = (b.0 - a.0, b.1 - a.1);
            let len2 = dx * dx + dz * dz;
            let t = if len2 > 0.0 {
                (((r - a.0) * dx + (z - a.1) * dz) / len2).clamp(0.0, 1.0)
            } else {
                0.0
            };
            ((a.0 + t * dx - r).powi(2) + (a.1 + t * dz - z).powi(2)).sqrt()
        })
        .fold(f64::INFINITY, f64::min)
}

/// Whether the segment p–q passes through the open rectangle.
fn segment_meets_rect(
    p: (f64, f64),
    q: (f64, f64),
    (r0, r1, z0, z1): (f64, f64, f64, f64),
) -> bool {
    // Liang–Barsky clipping of the segment against the rectangle.
    let (dx, dz) = (q.0 - p.0, q.1 - p.1);
    let (mut t0, mut t1) = (0.0f64, 1.0f64);
    for (pk, qk) in [
        (-dx, p.0 - r0),
        (dx, r1 - p.0),
        (-dz, p.1 - z0),
        (dz, z1 - p.1),
    ] {
        if pk == 0.0 {
            if qk <= 0.0 {
                return false;
            }
        } else {
            let t = qk / pk;
            if pk < 0.0 {
                t0 = t0.max(t);
            } else {
                t1 = t1.min(t);
            }
        }
    }
    t0 < t1
}

/// Answer of [`Shape::classify`].
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Overlap {
    /// The rectangle lies in the closed profile.
    Inside,
    /// The rectangle and the open profile do not meet.
    Outside,
    /// The surface passes through the rectangle.
    Cut,
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn surface_normals_of_sphere_and_cone() {
        // Exact by construction (elementary geometry).
        let sphere = Shape::Sphere {
            radius: 2.0,
            center: 1.0,
        };
        let (d, n) = sphere.surface_normal(1.2, 1.0 + 1.6).unwrap();
        assert!((d - 0.0).abs() < 1e-12 && (n.0 - 0.6).abs() < 1e-12 && (n.1 - 0.8).abs() < 1e-12);
        assert!(sphere.surface_normal(0.0, 1.0).is_none());
        // Frustum 0 … 3 in r at the bottom, 1 at the top (height 2): the
        // slanted side's normal is (2, 2)/|(2, 2)| rotated: (1, 1)/√2.
        let cone = Shape::Cone {
            radius_bottom: 3.0,
            radius_top: 1.0,
            height: 2.0,
            base: 0.0,
        };
        let (d, n) = cone.surface_normal(2.0 + 0.1, 1.0 + 0.1).unwrap();
        let h = std::f64::consts::FRAC_1_SQRT_2;
        assert!((d - 0.1 * 2f64.sqrt()).abs() < 1e-12, "{d}");
        assert!((n.0.abs() - h).abs() < 1e-12 && (n.1.abs() - h).abs() < 1e-12);
        // Nearest the top face: normal along z; the axis edge is no surface.
        let (_, n) = cone.surface_normal(0.3, 2.2).unwrap();
        assert!(n.0.abs() < 1e-12 && (n.1.abs() - 1.0).abs() < 1e-12);
        // Nearest a corner of the profile: no single normal.
        assert!(cone.surface_normal(3.5, -0.5).is_none());
    }

    #[test]
    fn cone_and_polygon_contain_and_classify() {
        let cone = Shape::Cone {
            radius_bottom: 2.0,
            radius_top: 1.0,
            height: 2.0,
            base: 0.0,
        };
        assert!(cone.contains(1.4, 1.0, 0.0));
        assert!(!cone.contains(1.6, 1.0, 0.0));
        assert_eq!(cone.bounds(), (0.0, 2.0, 0.0, 2.0));
        assert_eq!(cone.classify(0.1, 0.5, 0.1, 0.5), Overlap::Inside);
        assert_eq!(cone.classify(1.4, 1.6, 0.9, 1.1), Overlap::Cut);
        assert_eq!(cone.classify(2.1, 2.5, 0.1, 0.5), Overlap::Outside);
        // An L-shaped profile (a stepped puck).
        let l = Shape::Polygon {
            points: vec![
                (0.0, 0.0),
                (3.0, 0.0),
                (3.0, 1.0),
                (1.0, 1.0),
                (1.0, 2.0),
                (0.0, 2.0),
            ],
        };
        assert!(l.contains(2.0, 0.5, 0.0) && l.contains(0.5, 1.5, 0.0));
        assert!(!l.contains(2.0, 1.5, 0.0));
        assert_eq!(l.classify(1.5, 2.5, 1.2, 1.8), Overlap::Outside);
        assert_eq!(l.classify(0.5, 1.5, 0.5, 1.5), Overlap::Cut);
    }

    #[test]
    fn ring_excludes_its_hole() {
        let s = Shape::Ring {
            inner_radius: 1.0,
            outer_radius: 2.0,
            height: 1.0,
            base: 0.5,
        };
        assert!(!s.contains(0.5, 1.0, 0.0));
        assert!(s.contains(1.5, 1.0, 0.0));
        assert!(s.contains(1.0, 0.5, 0.0));
        assert!(!s.contains(1.5, 1.6, 0.0));
        assert!(s.contains(1.5, 1.5 + 1e-12, 1e-9));
    }
}
