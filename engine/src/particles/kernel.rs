//! The kernel that turns parcel volumes into a local solids volume fraction.
//!
//! W(Δx, Δy, Δz) = K₂(ρ/a)/a² · K₁(Δz/b)/b, a product of a 2-D Epanechnikov
//! kernel across (radius a) and a flat window of height b < a along gravity:
//! concentrations in a settling vessel change much faster with height than
//! across, so the kernel averages over more parcels sideways.
//!
//! Along gravity the kernel looks *ahead* only: a settling parcel weighs the
//! parcels below it, a rising one those above. Hindered settling slows with
//! concentration, so concentration waves travel backwards relative to the
//! parcels (φ v′(φ) < 0) and a parcel's speed must follow the suspension it is
//! moving into, as a driver follows the car in front. A centred estimate
//! weighs the parcels behind too; like central differencing of a transport
//! equation, it lets parcels bunch up, which biases φ high and slows settling.
//! The one-sided kernel is the particle form of upwinding.
//!
//! The window is flat along gravity because look-ahead keeps parcels apart
//! from the one in front: a kernel peaked at zero separation would read that
//! gap as a lower concentration. What remains is a bias of about −1/N for N
//! parcels in the window (the correlation hole in front of each parcel, worth
//! about one parcel; measured −3.5 % at 32, −1.7 % at 64, −0.8 % at 128).
//! Together with the noise of the estimate, which raises the mean of the
//! convex hindered-settling function, it makes dense suspensions settle a few
//! percent fast at small N; the default of 256 keeps both under 1 %.
//!
//! Near a wall, the floor or the free surface part of the kernel lies outside
//! the liquid, and a plain sum would read low. Because the vessel is a prism
//! (cross-section × height) and the kernel a product, the fraction of the
//! kernel inside is itself a product c_h(x, y) · c_z(z); dividing by it makes a
//! uniform suspension read uniform right up to the boundaries.

use super::geometry::Section;

/// K₁(u) = 1 on 0 ≤ u < 1: a flat window ahead of the parcel.
#[inline]
fn k1(_u: f64) -> f64 {
    1.0
}

/// Integral of K₁ from 0 to u (u in [0, 1]).
#[inline]
fn k1_integral(u: f64) -> f64 {
    u
}

/// K₂(s) = (2/π)(1 − s²) on s < 1; unit integral over the unit disc.
#[inline]
fn k2(s2: f64) -> f64 {
    std::f64::consts::FRAC_2_PI * (1.0 - s2)
}

/// Gauss–Legendre nodes and weights on [−1, 1], 16 points (Abramowitz & Stegun Table 25.4).
const GL16: [(f64, f64); 8] = [
    (0.095_012_509_837_637_44, 0.189_450_610_455_068_5),
    (0.281_603_550_779_258_9, 0.182_603_415_044_923_6),
    (0.458_016_777_657_227_4, 0.169_156_519_395_002_5),
    (0.617_876_244_402_643_7, 0.149_595_988_816_576_7),
    (0.755_404_408_355_003, 0.124_628_971_255_533_9),
    (0.865_631_202_387_831_7, 0.095_158_511_682_492_78),
    (0.944_575_023_073_232_6, 0.062_253_523_938_647_89),
    (0.989_400_934_991_649_9, 0.027_152_459_411_754_09),
];

/// Fraction of the horizontal kernel (radius a) centred at (x, y) that lies
/// inside the cross-section, by quadrature: Gauss–Legendre in radius,
/// midpoints in angle.
fn horizontal_overlap(section: &Section, a: f64, x: f64, y: f64) -> f64 {
    const ANGLES: usize = 96;
    let mut sum = 0.0;
    for &(node, weight) in &GL16 {
        for sign in [-1.0, 1.0] {
            let s = 0.5 * (1.0 + sign * node); // map [−1, 1] → [0, 1]
            let w = 0.5 * weight * k2(s * s) * s;
            let mut inside = 0usize;
            for j in 0..ANGLES {
                let th = (j as f64 + 0.5) * std::f64::consts::TAU / ANGLES as f64;
                if section.contains(x + a * s * th.cos(), y + a * s * th.sin()) {
                    inside += 1;
                }
            }
            sum += w * inside as f64 * std::f64::consts::TAU / ANGLES as f64;
        }
    }
    sum
}

/// Kernel radius a and window height b so that about `neighbours` parcels fall
/// inside the window in the initial suspension: n·b·min(πa², A) = neighbours
/// with a = aspect·b.
pub fn window_size(
    section: &Section,
    top: f64,
    parcels: u64,
    neighbours: u32,
    aspect: f64,
) -> (f64, f64) {
    let area = section.area();
    let density = parcels as f64 / (area * top);
    let count = |b: f64| density * b * (std::f64::consts::PI * (aspect * b).powi(2)).min(area);
    let (mut lo, mut hi) = (0.0, top);
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if count(mid) < neighbours as f64 {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    // A window taller than a quarter of the column would blur the whole settling curve.
    let b = hi.min(0.25 * top);
    (aspect * b, b)
}

/// Tabulated horizontal correction, interpolated linearly.
#[derive(Debug, Clone)]
enum HorizontalTable {
    /// Round section: depends on the distance from the axis only.
    Radial { radius: f64, values: Vec<f64> },
    /// Rectangular section: a grid over the section.
    Grid {
        half_w: f64,
        half_d: f64,
        n: usize,
        values: Vec<f64>,
    },
}

/// The concentration kernel of one run.
#[derive(Debug, Clone)]
pub struct Kernel {
    /// Horizontal radius a and window height b along gravity, m.
    pub radius: f64,
    pub window_height: f64,
    /// Height of the liquid (free surface), m.
    pub top: f64,
    /// Floor, m: 0 in a vessel. A thickener opens both ends (−∞ and +∞):
    /// the outlets' suspension continues beyond them (see `thickener`).
    pub bottom: f64,
    norm: f64,
    table: HorizontalTable,
}

impl Kernel {
    /// Choose the kernel so that about `neighbours` parcels fall inside its
    /// window in the initial suspension: n·b·min(πa², A) = neighbours with a = aspect·b.
    pub fn for_neighbours(
        section: &Section,
        top: f64,
        parcels: u64,
        neighbours: u32,
        aspect: f64,
    ) -> Kernel {
        let (a, b) = window_size(section, top, parcels, neighbours, aspect);
        Kernel::new(section, top, a, b)
    }

    pub fn new(section: &Section, top: f64, radius: f64, window_height: f64) -> Kernel {
        let table = match *section {
            Section::Round { radius: r } => {
                const N: usize = 257;
                let values = (0..N)
                    .map(|i| {
                        let x = r * i as f64 / (N - 1) as f64;
                        horizontal_overlap(section, radius, x, 0.0)
                    })
                    .collect();
                HorizontalTable::Radial { radius: r, values }
            }
            Section::Rectangular { width, depth } => {
                const N: usize = 65;
                let (hw, hd) = (0.5 * width, 0.5 * depth);
                let mut values = Vec::with_capacity(N * N);
                for j in 0..N {
                    for i in 0..N {
                        let x = -hw + width * i as f64 / (N - 1) as f64;
                        let y = -hd + depth * j as f64 / (N - 1) as f64;
                        values.push(horizontal_overlap(section, radius, x, y));
                    }
                }
                HorizontalTable::Grid {
                    half_w: hw,
                    half_d: hd,
                    n: N,
                    values,
                }
            }
        };
        Kernel {
            radius,
            window_height,
            top,
            bottom: 0.0,
            norm: 1.0 / (radius * radius * window_height),
            table,
        }
    }

    /// Kernel weight (1/m³) of a parcel at the scaled offset (Δx/a, Δy/a, Δz/b)
    /// from a parcel looking down (`up = false`) or up; zero outside the support.
    #[inline]
    pub fn weight_scaled(&self, sx: f64, sy: f64, sz: f64, up: bool) -> f64 {
        let s2 = sx * sx + sy * sy;
        let ahead = if up { sz } else { -sz };
        if s2 >= 1.0 || !(0.0..1.0).contains(&ahead) {
            return 0.0;
        }
        self.norm * k2(s2) * k1(ahead)
    }

    /// Fraction of the kernel at (x, y, z), looking down or up, that lies
    /// inside the liquid.
    pub fn inside_fraction(&self, x: f64, y: f64, z: f64, up: bool) -> f64 {
        let vertical = k1_integral(self.window_inside(z, up) / self.window_height);
        vertical * self.horizontal_fraction(x, y)
    }

    /// Length of the window at height z, looking down or up, that lies
    /// inside the liquid, m: the window height b away from the floor and the
    /// free surface, less near them.
    #[inline]
    pub fn window_inside(&self, z: f64, up: bool) -> f64 {
        let room = if up { self.top - z } else { z - self.bottom };
        room.clamp(0.0, self.window_height)
    }

    /// Height from which a window looking down or up keeps at least
    /// `min_length` (≤ b) inside the liquid: z itself away from the floor and
    /// the free surface; near them, the height `min_length` above the floor
    /// (or below the surface), so that the window then covers the liquid
    /// nearest the boundary, the parcel included.
    #[inline]
    pub fn window_anchor(&self, z: f64, up: bool, min_length: f64) -> f64 {
        if up {
            z.min(self.top - min_length)
        } else {
            z.max(self.bottom + min_length)
        }
    }

    /// Height of the middle of the liquid part of the window at `anchor`
    /// looking down or up, m.
    #[inline]
    pub fn window_centre(&self, anchor: f64, up: bool) -> f64 {
        let half = 0.5 * self.window_inside(anchor, up);
        if up { anchor + half } else { anchor - half }
    }

    fn horizontal_fraction(&self, x: f64, y: f64) -> f64 {
        match &self.table {
            HorizontalTable::Radial { radius, values } => {
                let r = (x * x + y * y).sqrt();
                let t = (r / radius).min(1.0) * (values.len() - 1) as f64;
                let i = (t.floor() as usize).min(values.len() - 2);
                let f = t - i as f64;
                values[i] * (1.0 - f) + values[i + 1] * f
            }
            HorizontalTable::Grid {
                half_w,
                half_d,
                n,
                values,
            } => {
                let tx = ((x + half_w) / (2.0 * half_w)).clamp(0.0, 1.0) * (n - 1) as f64;
                let ty = ((y + half_d) / (2.0 * half_d)).clamp(0.0, 1.0) * (n - 1) as f64;
                let i = (tx.floor() as usize).min(n - 2);
                let j = (ty.floor() as usize).min(n - 2);
                let (fx, fy) = (tx - i as f64, ty - j as f64);
                let v = |i: usize, j: usize| values[j * n + i];
                (v(i, j) * (1.0 - fx) + v(i + 1, j) * fx) * (1.0 - fy)
                    + (v(i, j + 1) * (1.0 - fx) + v(i + 1, j + 1) * fx) * fy
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn kernel_integrates_to_one() {
        // Exact: ∫K₁ = 1 on [−1, 1] and ∫K₂ = 1 on the unit disc; check W by
        // midpoint quadrature over its support.
        let k = Kernel::new(&Section::Round { radius: 1.0 }, 10.0, 0.2, 0.05);
        let n = 200;
        let mut sum = 0.0;
        for i in 0..n {
            for j in 0..n {
                for l in 0..n / 4 {
                    let sx = -1.0 + 2.0 * (i as f64 + 0.5) / n as f64;
                    let sy = -1.0 + 2.0 * (j as f64 + 0.5) / n as f64;
                    let sz = -1.0 + 2.0 * (l as f64 + 0.5) / (n / 4) as f64;
                    sum += k.weight_scaled(sx, sy, sz, false) + k.weight_scaled(sx, sy, sz, true);
                }
            }
        }
        let cell = (2.0 * 0.2 / n as f64).powi(2) * (2.0 * 0.05 / (n / 4) as f64);
        // Each one-sided kernel integrates to one, so both together give two.
        assert!((sum * cell - 2.0).abs() < 4e-3, "∫W = {}", sum * cell);
    }

    #[test]
    fn inside_fraction_at_boundaries() {
        let k = Kernel::new(&Section::Round { radius: 0.05 }, 1.0, 0.01, 0.005);
        // Deep inside: the whole kernel. On the floor looking down: nothing;
        // half a window above it: exactly half (flat window). Looking up, the
        // free surface plays the floor's part.
        assert!((k.inside_fraction(0.0, 0.0, 0.5, false) - 1.0).abs() < 1e-12);
        assert!(k.inside_fraction(0.0, 0.0, 0.0, false).abs() < 1e-12);
        assert!((k.inside_fraction(0.0, 0.0, 0.0025, false) - 0.5).abs() < 1e-12);
        assert!((k.inside_fraction(0.0, 0.0, 0.9975, true) - 0.5).abs() < 1e-12);
        assert!((k.inside_fraction(0.0, 0.0, 0.0, true) - 1.0).abs() < 1e-12);
        let wall = k.inside_fraction(0.05, 0.0, 0.5, false);
        // A curved wall bulges into the kernel, so slightly under half (quadrature: ≤ 1 %).
        assert!(wall < 0.5 && wall > 0.45, "{wall}");
        let rect = Kernel::new(
            &Section::Rectangular {
                width: 0.2,
                depth: 0.1,
            },
            1.0,
            0.01,
            0.005,
        );
        assert!((rect.inside_fraction(0.1, 0.0, 0.5, false) - 0.5).abs() < 5e-3);
        // Corner of a rectangle: a quarter of the disc.
        assert!((rect.inside_fraction(0.1, 0.05, 0.5, false) - 0.25).abs() < 5e-3);
    }

    #[test]
    fn neighbour_target_sets_the_kernel_size() {
        // 1e5 parcels in a 1 m × (0.1 m)² column, 64 neighbours, aspect 4:
        // n·b·π(4b)² = 64 ⇒ b = (64/(n·16π))^(1/3) while πa² < A.
        let sec = Section::Rectangular {
            width: 0.1,
            depth: 0.1,
        };
        let k = Kernel::for_neighbours(&sec, 1.0, 100_000, 64, 4.0);
        let n = 100_000.0 / 0.01;
        let b = (64.0 / (n * 16.0 * std::f64::consts::PI)).powf(1.0 / 3.0);
        assert!((k.window_height - b).abs() < 1e-9 * b);
        assert!((k.radius - 4.0 * b).abs() < 1e-9 * b);
    }
}
