//! The vessel's horizontal cross-section, centred on the vertical axis.

use crate::scenario::resolve::{Column, ColumnShape};

#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Section {
    Round { radius: f64 },
    Rectangular { width: f64, depth: f64 },
}

impl Section {
    /// The section of a batch column.
    pub fn of_column(column: &Column) -> Section {
        match column.shape {
            ColumnShape::Round { diameter } => Section::Round {
                radius: 0.5 * diameter,
            },
            ColumnShape::Rectangular { width, depth } => Section::Rectangular { width, depth },
        }
    }

    pub fn area(&self) -> f64 {
        match *self {
            Section::Round { radius } => std::f64::consts::PI * radius * radius,
            Section::Rectangular { width, depth } => width * depth,
        }
    }

    #[inline]
    pub fn contains(&self, x: f64, y: f64) -> bool {
        match *self {
            Section::Round { radius } => x * x + y * y <= radius * radius,
            Section::Rectangular { width, depth } => {
                x.abs() <= 0.5 * width && y.abs() <= 0.5 * depth
            }
        }
    }

    /// A point uniformly distributed over the section from two uniforms in [0, 1).
    pub fn sample(&self, u1: f64, u2: f64) -> (f64, f64) {
        match *self {
            Section::Round { radius } => {
                let r = radius * u1.sqrt();
                let th = std::f64::consts::TAU * u2;
                (r * th.cos(), r * th.sin())
            }
            Section::Rectangular { width, depth } => ((u1 - 0.5) * width, (u2 - 0.5) * depth),
        }
    }

    /// Bring a point that left the section back in by mirroring it at the wall.
    pub fn reflect(&self, x: f64, y: f64) -> (f64, f64) {
        match *self {
            Section::Round { radius } => {
                let r = (x * x + y * y).sqrt();
                if r <= radius {
                    (x, y)
                } else {
                    let r2 = (2.0 * radius - r).max(0.0);
                    (x * r2 / r, y * r2 / r)
                }
            }
            Section::Rectangular { width, depth } => {
                (mirror(x, 0.5 * width), mirror(y, 0.5 * depth))
            }
        }
    }

    /// Bounding box (x_min, y_min, x_max, y_max).
    pub fn bounds(&self) -> (f64, f64, f64, f64) {
        match *self {
            Section::Round { radius } => (-radius, -radius, radius, radius),
            Section::Rectangular { width, depth } => {
                (-0.5 * width, -0.5 * depth, 0.5 * width, 0.5 * depth)
            }
        }
    }
}

fn mirror(v: f64, half: f64) -> f64 {
    if v > half {
        (2.0 * half - v).max(-half)
    } else if v < -half {
        (-2.0 * half - v).min(half)
    } else {
        v
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reflection_keeps_points_inside() {
        let s = Section::Round { radius: 1.0 };
        let (x, y) = s.reflect(1.2, 0.0);
        assert!((x - 0.8).abs() < 1e-15 && y == 0.0);
        let r = Section::Rectangular {
            width: 2.0,
            depth: 1.0,
        };
        assert_eq!(r.reflect(1.25, -0.75), (0.75, -0.25));
    }
}
