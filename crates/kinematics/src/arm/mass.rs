//! Mass properties of a rigid body: mass, centre of mass and rotational inertia.

use nalgebra::{Isometry3, Matrix3, Vector3};

use super::ArmError;

/// Mass in kg, centre of mass in m and the inertia tensor about the centre of mass in kg·m²,
/// all in one body frame.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MassProperties {
    /// Mass, in kg.
    pub mass: f64,
    /// Centre of mass in the body frame, in m.
    pub centre: Vector3<f64>,
    /// Inertia tensor about the centre of mass, body-frame axes, in kg·m².
    pub inertia: Matrix3<f64>,
}

impl MassProperties {
    /// No mass at all.
    pub fn zero() -> MassProperties {
        MassProperties {
            mass: 0.0,
            centre: Vector3::zeros(),
            inertia: Matrix3::zeros(),
        }
    }

    /// A point mass of `mass` kg at `centre` (m).
    pub fn point(mass: f64, centre: Vector3<f64>) -> MassProperties {
        MassProperties {
            mass,
            centre,
            inertia: Matrix3::zeros(),
        }
    }

    /// A uniform thin rod of `mass` kg from the frame origin along +X for `length` m: its centre
    /// sits at half the length and its inertia is m·L²/12 about Y and Z.
    pub fn rod_along_x(mass: f64, length: f64) -> MassProperties {
        let across = mass * length * length / 12.0;
        MassProperties {
            mass,
            centre: Vector3::new(length / 2.0, 0.0, 0.0),
            inertia: Matrix3::from_diagonal(&Vector3::new(0.0, across, across)),
        }
    }

    /// The same body described in a parent frame, where `placement` maps body coordinates to
    /// parent coordinates.
    pub fn transformed(&self, placement: &Isometry3<f64>) -> MassProperties {
        let rotation = placement.rotation.to_rotation_matrix();
        let r = rotation.matrix();
        MassProperties {
            mass: self.mass,
            centre: placement.transform_vector(&self.centre) + placement.translation.vector,
            inertia: r * self.inertia * r.transpose(),
        }
    }

    /// The two bodies joined rigidly (parallel-axis theorem), in the same frame.
    pub fn combined(&self, other: &MassProperties) -> MassProperties {
        let mass = self.mass + other.mass;
        if mass <= 0.0 {
            return MassProperties::zero();
        }
        let centre = (self.centre * self.mass + other.centre * other.mass) / mass;
        let shifted = |body: &MassProperties| {
            let d = body.centre - centre;
            body.inertia + body.mass * (Matrix3::identity() * d.dot(&d) - d * d.transpose())
        };
        MassProperties {
            mass,
            centre,
            inertia: shifted(self) + shifted(other),
        }
    }

    pub(crate) fn check(&self, what: &str) -> Result<(), ArmError> {
        if !(self.mass.is_finite() && self.mass >= 0.0) {
            return Err(ArmError::Mass {
                what: what.to_string(),
                value: self.mass,
            });
        }
        if !self
            .centre
            .iter()
            .chain(self.inertia.iter())
            .all(|v| v.is_finite())
        {
            return Err(ArmError::Mass {
                what: format!("{what} centre or inertia"),
                value: self.mass,
            });
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn two_points_combine_by_the_parallel_axis_theorem() {
        // Two 1 kg points 1 m apart: centre midway, inertia about a perpendicular axis through
        // the centre 2·1·0.5² = 0.5 kg·m² (any statics textbook).
        let a = MassProperties::point(1.0, Vector3::new(0.0, 0.0, 0.0));
        let b = MassProperties::point(1.0, Vector3::new(1.0, 0.0, 0.0));
        let both = a.combined(&b);
        assert!((both.centre.x - 0.5).abs() < 1e-12);
        assert!((both.inertia[(1, 1)] - 0.5).abs() < 1e-12);
        assert!((both.inertia[(2, 2)] - 0.5).abs() < 1e-12);
        assert!(both.inertia[(0, 0)].abs() < 1e-12);
    }
}
