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
        let (a0, a1, b0, b1) = self.bounds();
        if r1 <= a0 || r0 >= a1 || z1 <= b0 || z0 >= b1 {
            Overlap::Outside
        } else if r0 >= a0 && r1 <= a1 && z0 >= b0 && z1 <= b1 {
            Overlap::Inside
        } else {
            Overlap::Cut
        }
    }

    /// The shape's name as written in scenario files.
    pub fn kind(&self) -> &'static str {
        match self {
            Shape::Cylinder { .. } => "cylinder",
            Shape::Ring { .. } => "ring",
            Shape::Sphere { .. } => "sphere",
        }
    }
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
