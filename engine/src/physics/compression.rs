//! Compression of flocculated suspensions: the effective solid stress, the
//! degenerate diffusion it adds to Kynch's batch-settling law, and the final
//! sediment of a closed column.
//!
//! Above its gel point φc a flocculated suspension forms a network that
//! carries part of its own buoyant weight. Bürger & Concha (1998) write this
//! as an effective solid stress σe(φ), zero for φ ≤ φc and increasing above
//! it, and obtain the strongly degenerate convection–diffusion equation
//! (physics.md §6.1; x is depth, positive downward)
//!
//! ```text
//! ∂φ/∂t + ∂f_bk(φ)/∂x = ∂²A(φ)/∂x²,   A(φ) = ∫₀^φ a(s) ds,
//! a(φ) = v_hs(φ) σe′(φ) / (Δρ g)                          [m²/s]
//! ```
//!
//! with `v_hs` the hindered settling velocity of [`super::hindered`],
//! Δρ = ρs − ρf and g gravity. Since σe′ = 0 for φ ≤ φc, the equation is
//! hyperbolic there and parabolic above. Buscall & White (1987) call the same
//! quantity the compressive yield stress P_y(φ).
//!
//! # The power-law stress
//!
//! [`PowerLawStress`] is σe(φ) = σ0 [(φ/φc)^k − 1] for φ > φc and 0 otherwise
//! (physics.md §6.1 [M]); its derivative is σe′(φ) = σ0 k φ^(k−1)/φc^k above
//! φc. The stress is continuous at φc (it tends to 0 from above); its
//! derivative jumps there from 0 to σ0 k/φc, so a(φ) jumps too.
//!
//! # Steady sediment of a closed column (derivation)
//!
//! Let z be the height above the floor. In the final state of a batch column
//! the solids flux vanishes everywhere. In z (∂x = −∂z) the flux of the
//! equation above is `f_bk + a ∂φ/∂z = φ v_hs [1 + σe′ ∂φ/∂z /(Δρ g φ)]`, so
//! wherever v_hs > 0
//!
//! ```text
//! σe′(φ) dφ/dz = dσe/dz = −Δρ g φ                                    (1)
//! ```
//!
//! the network carries the buoyant weight of the solids above it. Above the
//! sediment the flux φ v_hs(φ) must vanish, so φ = 0 there when v_hs > 0 on
//! (0, φc] (clear supernate), and all solids, φ0 H0 per unit area, lie in the
//! sediment. At its surface z = h_s the stress is zero (nothing rests on
//! it), so φ(h_s) = φc. Integrating (1) from z to h_s,
//! σe(φ(z)) = Δρ g ∫_z^{h_s} φ dz′, and at the floor
//!
//! ```text
//! σe(φb) = Δρ g φ0 H0   ⇒   φb = φc (1 + Δρ g φ0 H0/σ0)^(1/k).        (2)
//! ```
//!
//! Separating (1), dz = −σe′(φ) dφ /(Δρ g φ), so
//! h_s = ∫_{φc}^{φb} σe′(φ)/(Δρ g φ) dφ = σ0 k/(Δρ g φc^k) ∫ φ^(k−2) dφ:
//!
//! ```text
//! h_s = σ0 k /(Δρ g φc^k (k−1)) (φb^(k−1) − φc^(k−1))    (k ≠ 1),
//! h_s = σ0 /(Δρ g φc) ln(φb/φc)                          (k = 1).      (3)
//! ```
//!
//! With the length λ = σ0 k/(Δρ g φc), β = k − 1 and L = ln(φb/φc) both are
//! h_s = λ E_β(L), where E_β(L) = (e^(βL) − 1)/β = expm1(βL)/β and
//! E_0(L) = L; evaluated that way there is no cancellation near k = 1.
//!
//! *Profile.* The same integral from φc to φ(z) equals the distance h_s − z
//! below the surface: λ E_β(ln(φ/φc)) = h_s − z. Inverting, with
//! s = (h_s − z)/λ,
//!
//! ```text
//! φ(z) = φc (1 + (k−1) s)^(1/(k−1)) = φc exp(ln1p(β s)/β),   0 ≤ z ≤ h_s,
//! φ(z) = φc e^s                                              (k = 1),  (4)
//! ```
//!
//! and φ = 0 above h_s. It rises from φc at the surface to φb at the floor.
//!
//! *Mass.* By (1), Δρ g ∫₀^{h_s} φ dz = σe(φb) − σe(φc) = Δρ g φ0 H0: the
//! profile holds exactly the solids that were loaded (physics.md §6.2).
//!
//! *Limits.* Because σe is continuous at φc, any positive load gives
//! φb > φc and a sediment of positive height; as φ0 H0 → 0, φb → φc and
//! h_s ≈ φ0 H0/φc (a layer at the gel point). The closed form no longer
//! describes the final state when φb exceeds the packing limit φmax, or when
//! h_s > H0 (possible only for φ0 > φc and a stiff network, which then stays
//! expanded against the lid): [`PowerLawStress::steady_sediment`] reports
//! both.

/// Effective solid stress of the power-law form
/// σe(φ) = σ0 [(φ/φc)^k − 1] for φ > φc, 0 for φ ≤ φc [Pa]
/// (Bürger & Concha 1998; physics.md §6.1 [M]). Typical magnitudes
/// [M]: σ0 ~ 0.1–10 Pa, k ~ 5–10, φc ~ 0.05–0.25.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PowerLawStress {
    /// Stress scale σ0 [Pa].
    pub yield_stress: f64,
    /// Gel point (critical concentration) φc [-], where the network forms.
    pub gel_point: f64,
    /// Exponent k [-].
    pub exponent: f64,
}

/// The final sediment of a closed batch column under a [`PowerLawStress`]
/// (module docs, eqs. 2–4).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SteadySediment {
    /// Volume fraction at the floor φb [-].
    pub bottom_volume_fraction: f64,
    /// Height of the sediment surface above the floor h_s [m].
    pub height: f64,
    /// Effective stress at the floor σe(φb) = Δρ g φ0 H0 [Pa].
    pub bottom_stress: f64,
    /// Compression length λ = σ0 k/(Δρ g φc) [m] of the profile (eq. 4).
    pub length_scale: f64,
}

/// Why [`PowerLawStress::steady_sediment`] has no closed-form answer.
#[derive(Debug, Clone, Copy, PartialEq, thiserror::Error)]
pub enum SteadySedimentError {
    /// A parameter is out of its range (named, with the offending value).
    #[error("{name} must be {expected}, got {value}")]
    InvalidParameter {
        name: &'static str,
        expected: &'static str,
        value: f64,
    },
    /// The floor would be packed beyond the packing limit.
    #[error(
        "the floor of the sediment would reach a volume fraction of {bottom_volume_fraction}, \
         above the packing limit {phi_max}"
    )]
    ExceedsPacking {
        bottom_volume_fraction: f64,
        phi_max: f64,
    },
    /// The network is too stiff to settle below the initial fill height.
    #[error(
        "the compressed sediment would be {height} m high, more than the {column_height} m \
         column: the network does not settle"
    )]
    FillsColumn { height: f64, column_height: f64 },
}

impl PowerLawStress {
    /// Effective solid stress σe(φ) [Pa] at volume fraction `phi` [-].
    pub fn stress(&self, phi: f64) -> f64 {
        if phi > self.gel_point {
            self.yield_stress * ((phi / self.gel_point).powf(self.exponent) - 1.0)
        } else {
            0.0
        }
    }

    /// dσe/dφ [Pa] = σ0 k (φ/φc)^(k−1)/φc for φ > φc, and 0 for φ ≤ φc (at
    /// φc itself the left value: the derivative jumps there to σ0 k/φc).
    pub fn stress_derivative(&self, phi: f64) -> f64 {
        if phi > self.gel_point {
            let k = self.exponent;
            self.yield_stress * k * (phi / self.gel_point).powf(k - 1.0) / self.gel_point
        } else {
            0.0
        }
    }

    /// The volume fraction [-] at which the network carries the stress
    /// `stress` [Pa]: φ = φc (1 + σ/σ0)^(1/k), the inverse of
    /// [`stress`](Self::stress) on φ ≥ φc. Stresses ≤ 0 give φc.
    pub fn volume_fraction(&self, stress: f64) -> f64 {
        if stress <= 0.0 {
            return self.gel_point;
        }
        // ln1p keeps φ/φc − 1 accurate for loads much smaller than σ0.
        self.gel_point * ((stress / self.yield_stress).ln_1p() / self.exponent).exp()
    }

    /// Final sediment of a closed column filled to `h0` [m] with a uniform
    /// suspension of volume fraction `phi0` [-], for the solid–liquid
    /// density difference `density_excess` Δρ [kg/m³], gravity `g` [m/s²]
    /// and packing limit `phi_max` [-] (module docs, eqs. 2–3).
    ///
    /// Assumes the hindered settling velocity is positive on (0, φc], so the
    /// supernate clears and every solid ends in the sediment. A zero load
    /// (`phi0` or `h0` zero) gives a sediment of zero height with
    /// φb = φc, the limit of small loads.
    ///
    /// # Errors
    ///
    /// * [`SteadySedimentError::InvalidParameter`]: σ0, k, Δρ or g not
    ///   positive and finite, φc not in (0, 1), φmax not in (φc, 1],
    ///   φ0 not in [0, 1) or H0 negative or not finite.
    /// * [`SteadySedimentError::ExceedsPacking`]: φb > φmax; the power law no
    ///   longer describes the bottom of the sediment.
    /// * [`SteadySedimentError::FillsColumn`]: h_s > H0 (only when φ0 > φc):
    ///   the network cannot consolidate below the initial fill and the final
    ///   state keeps φ > φc at the lid.
    pub fn steady_sediment(
        &self,
        density_excess: f64,
        g: f64,
        phi0: f64,
        h0: f64,
        phi_max: f64,
    ) -> Result<SteadySediment, SteadySedimentError> {
        let invalid = |name, expected, value| {
            Err(SteadySedimentError::InvalidParameter {
                name,
                expected,
                value,
            })
        };
        let positive = |x: f64| x > 0.0 && x.is_finite();
        let (sigma0, phi_c, k) = (self.yield_stress, self.gel_point, self.exponent);
        if !positive(sigma0) {
            return invalid("yield stress σ0", "positive and finite", sigma0);
        }
        if !(phi_c > 0.0 && phi_c < 1.0) {
            return invalid("gel point φc", "in (0, 1)", phi_c);
        }
        if !positive(k) {
            return invalid("exponent k", "positive and finite", k);
        }
        if !positive(density_excess) {
            return invalid("density excess Δρ", "positive and finite", density_excess);
        }
        if !positive(g) {
            return invalid("gravity g", "positive and finite", g);
        }
        if !(phi_max > phi_c && phi_max <= 1.0) {
            return invalid("packing limit φmax", "in (φc, 1]", phi_max);
        }
        if !(0.0..1.0).contains(&phi0) {
            return invalid("initial volume fraction φ0", "in [0, 1)", phi0);
        }
        if !(h0 >= 0.0 && h0.is_finite()) {
            return invalid("fill height H0", "non-negative and finite", h0);
        }

        let weight = density_excess * g; // Δρ g [N/m³]
        let bottom_stress = weight * phi0 * h0; // eq. 2
        let phi_b = self.volume_fraction(bottom_stress);
        if phi_b > phi_max {
            return Err(SteadySedimentError::ExceedsPacking {
                bottom_volume_fraction: phi_b,
                phi_max,
            });
        }
        let length_scale = sigma0 * k / (weight * phi_c);
        // L = ln(φb/φc) = ln1p(Δρ g φ0 H0/σ0)/k, exact for tiny loads.
        let log_ratio = (bottom_stress / sigma0).ln_1p() / k;
        let height = length_scale * expm1_over(k - 1.0, log_ratio); // eq. 3
        if height > h0 {
            return Err(SteadySedimentError::FillsColumn {
                height,
                column_height: h0,
            });
        }
        Ok(SteadySediment {
            bottom_volume_fraction: phi_b,
            height,
            bottom_stress,
            length_scale,
        })
    }

    /// Volume fraction [-] of the final sediment `sediment` (from
    /// [`steady_sediment`](Self::steady_sediment) with this stress) at height
    /// `z` [m] above the floor (module docs, eq. 4): φc at the surface
    /// z = h_s, φb at the floor, 0 (clear supernate) above h_s. Heights below
    /// the floor read as the floor. A sediment of zero height gives 0
    /// everywhere.
    pub fn steady_profile(&self, sediment: &SteadySediment, z: f64) -> f64 {
        let h = sediment.height;
        if z > h || h <= 0.0 {
            return 0.0;
        }
        let s = (h - z.max(0.0)) / sediment.length_scale;
        self.gel_point * log1p_over(self.exponent - 1.0, s).exp()
    }
}

/// expm1(βx)/β, with its limit x at β = 0. Continuous in β: for |βx| small,
/// expm1 keeps full relative accuracy, so no switch is needed except at 0.
fn expm1_over(beta: f64, x: f64) -> f64 {
    if beta == 0.0 {
        x
    } else {
        (beta * x).exp_m1() / beta
    }
}

/// ln1p(βs)/β, with its limit s at β = 0 (the inverse of [`expm1_over`]).
fn log1p_over(beta: f64, s: f64) -> f64 {
    if beta == 0.0 {
        s
    } else {
        (beta * s).ln_1p() / beta
    }
}

/// Diffusion coefficient a(φ) = v_hs(φ) σe′(φ)/(Δρ g) [m²/s] of the
/// Bürger–Concha degenerate convection–diffusion equation (physics.md §6.1),
/// from the hindered settling velocity `hindered_velocity` v_hs [m/s], the
/// stress derivative `stress_derivative` σe′ [Pa], the density excess
/// `density_excess` Δρ = ρs − ρf [kg/m³] and gravity `g` [m/s²]. Equal to
/// f_bk σe′/(Δρ g φ). Zero wherever σe′ = 0 (below the gel point) or
/// v_hs = 0 (at packing).
pub fn diffusion(
    hindered_velocity: f64,
    stress_derivative: f64,
    density_excess: f64,
    g: f64,
) -> f64 {
    hindered_velocity * stress_derivative / (density_excess * g)
}

/// The integrated diffusion A(φ_i) = ∫₀^{φ_i} a(s) ds [m²/s] on the uniform
/// grid φ_i = i φmax/n, i = 0..=n (n + 1 values, A(0) = 0), for any
/// diffusion coefficient `a` (typically [`diffusion`] composed with a
/// hindered law and a stress), physics.md §8.3.
///
/// Each cell is integrated by adaptive 5-point Gauss–Legendre quadrature
/// (bisection until two levels agree to ~10⁻¹⁵ of ∫|a|), so jumps of `a`
/// inside a cell — at the gel point, or at φmax for truncated laws — are
/// localised by bisection and cost little accuracy; the cells are summed
/// with compensated summation. `a` is only evaluated strictly inside
/// (0, φmax). Panics if `n` is zero or `phi_max` is not positive and finite.
pub fn integrated_diffusion(a: impl Fn(f64) -> f64, phi_max: f64, n: usize) -> Vec<f64> {
    assert!(n > 0, "integrated_diffusion needs at least one cell");
    assert!(
        phi_max > 0.0 && phi_max.is_finite(),
        "integrated_diffusion needs a positive φmax, got {phi_max}"
    );
    let step = phi_max / n as f64;
    let edge = |i: usize| if i == n { phi_max } else { i as f64 * step };
    let coarse: Vec<f64> = (0..n)
        .map(|i| gauss_legendre_5(&a, edge(i), edge(i + 1)))
        .collect();
    let scale: f64 = coarse.iter().map(|c| c.abs()).sum();
    // A non-finite `a` is propagated, not refined.
    let tolerance = if scale.is_finite() {
        1e-15 * scale
    } else {
        f64::INFINITY
    };
    let mut values = Vec::with_capacity(n + 1);
    values.push(0.0);
    let (mut sum, mut carry) = (0.0_f64, 0.0_f64);
    for (i, &whole) in coarse.iter().enumerate() {
        let cell = adaptive(&a, edge(i), edge(i + 1), whole, tolerance, MAX_BISECTIONS);
        // Neumaier's compensated summation.
        let t = sum + cell;
        carry += if sum.abs() >= cell.abs() {
            (sum - t) + cell
        } else {
            (cell - t) + sum
        };
        sum = t;
        values.push(sum + carry);
    }
    values
}

/// Depth limit of the bisection in [`integrated_diffusion`]; a jump of `a`
/// then leaves an error of at most |jump|·h·2⁻⁴⁸.
const MAX_BISECTIONS: u32 = 48;

fn adaptive(a: &impl Fn(f64) -> f64, lo: f64, hi: f64, whole: f64, tol: f64, depth: u32) -> f64 {
    let mid = 0.5 * (lo + hi);
    let left = gauss_legendre_5(a, lo, mid);
    let right = gauss_legendre_5(a, mid, hi);
    let fine = left + right;
    let change = (fine - whole).abs();
    if depth == 0 || change <= tol || change.is_nan() || mid <= lo || mid >= hi {
        return fine;
    }
    adaptive(a, lo, mid, left, tol, depth - 1) + adaptive(a, mid, hi, right, tol, depth - 1)
}

/// 5-point Gauss–Legendre rule on [lo, hi] (exact for polynomials of degree
/// 9). Nodes ±√(5 ∓ 2√(10/7))/3 and weights (322 ± 13√70)/900, 128/225
/// (Abramowitz & Stegun 1964, Table 25.4), computed from their closed forms.
fn gauss_legendre_5(a: &impl Fn(f64) -> f64, lo: f64, hi: f64) -> f64 {
    let r = (10.0_f64 / 7.0).sqrt();
    let x1 = (5.0 - 2.0 * r).sqrt() / 3.0;
    let x2 = (5.0 + 2.0 * r).sqrt() / 3.0;
    let s70 = 70.0_f64.sqrt();
    let w1 = (322.0 + 13.0 * s70) / 900.0;
    let w2 = (322.0 - 13.0 * s70) / 900.0;
    let w0 = 128.0 / 225.0;
    let c = 0.5 * (lo + hi);
    let h = 0.5 * (hi - lo);
    h * (w0 * a(c) + w1 * (a(c - h * x1) + a(c + h * x1)) + w2 * (a(c - h * x2) + a(c + h * x2)))
}

/// A tabulated integrated diffusion A(φ) on a uniform grid over [0, φmax]
/// (see [`integrated_diffusion`]) with a lookup for any φ.
#[derive(Debug, Clone, PartialEq)]
pub struct IntegratedDiffusion {
    phi_max: f64,
    values: Vec<f64>,
}

impl IntegratedDiffusion {
    /// Tabulates A(φ) = ∫₀^φ a(s) ds at n + 1 equally spaced points on
    /// [0, `phi_max`]. Choose `n` so that the gel point falls on a node
    /// (φc n/φmax an integer): A has a kink there, which the linear
    /// interpolation of [`value`](Self::value) then reproduces exactly.
    pub fn tabulate(a: impl Fn(f64) -> f64, phi_max: f64, n: usize) -> Self {
        IntegratedDiffusion {
            phi_max,
            values: integrated_diffusion(a, phi_max, n),
        }
    }

    /// A(φ) [m²/s] by linear interpolation between the nodes: monotone
    /// wherever a ≥ 0, second-order accurate where a is smooth, first-order
    /// in a cell where a jumps. φ ≤ 0 gives 0; φ ≥ φmax gives A(φmax)
    /// (no diffusion above packing).
    pub fn value(&self, phi: f64) -> f64 {
        let n = self.values.len() - 1;
        if phi <= 0.0 {
            return 0.0;
        }
        if phi >= self.phi_max {
            return self.values[n];
        }
        let x = phi / self.phi_max * n as f64;
        let i = (x.floor() as usize).min(n - 1);
        let t = x - i as f64;
        self.values[i] + t * (self.values[i + 1] - self.values[i])
    }

    /// The tabulated values A(φ_i), i = 0..=n [m²/s].
    pub fn values(&self) -> &[f64] {
        &self.values
    }

    /// Upper end φmax of the table [-].
    pub fn phi_max(&self) -> f64 {
        self.phi_max
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn stress() -> PowerLawStress {
        PowerLawStress {
            yield_stress: 2.0,
            gel_point: 0.12,
            exponent: 5.0,
        }
    }

    #[test]
    fn gauss_legendre_is_exact_to_degree_nine() {
        // ∫₀¹ x⁹ dx = 1/10 exactly; ∫₀¹ x^10 = 1/11 is not reproduced.
        let nine = gauss_legendre_5(&|x: f64| x.powi(9), 0.0, 1.0);
        assert!((nine - 0.1).abs() < 1e-15, "{nine}");
        let ten = gauss_legendre_5(&|x: f64| x.powi(10), 0.0, 1.0);
        assert!((ten - 1.0 / 11.0).abs() > 1e-7, "{ten}");
    }

    #[test]
    fn integration_locates_a_jump_inside_a_cell() {
        // a = 1 for φ > 0.3 (a step inside the cell [0.25, 0.5]): A(φ) =
        // max(0, φ − 0.3) exactly.
        let values = integrated_diffusion(|s| if s > 0.3 { 1.0 } else { 0.0 }, 1.0, 4);
        let exact = [0.0, 0.0, 0.2, 0.45, 0.7];
        for (v, e) in values.iter().zip(exact) {
            assert!((v - e).abs() < 1e-13, "{v} vs {e}");
        }
    }

    #[test]
    fn integration_propagates_nan_without_refining() {
        let values = integrated_diffusion(|s| if s > 0.5 { f64::NAN } else { 1.0 }, 1.0, 8);
        assert!((values[4] - 0.5).abs() < 1e-15);
        assert!(values[8].is_nan());
    }

    #[test]
    fn expm1_helpers_are_continuous_through_k_equal_one() {
        // Limits at β → 0: expm1(βx)/β → x, ln1p(βs)/β → s (first-order
        // Taylor terms x²β/2 and −s²β/2 bound the difference).
        for beta in [1e-12, -1e-12, 1e-6] {
            assert!((expm1_over(beta, 0.7) - 0.7).abs() <= 0.49 * beta.abs() * 1.01 + 1e-15);
            assert!((log1p_over(beta, 0.7) - 0.7).abs() <= 0.49 * beta.abs() * 1.01 + 1e-15);
        }
        assert_eq!(expm1_over(0.0, 0.7), 0.7);
        assert_eq!(log1p_over(0.0, 0.7), 0.7);
    }

    #[test]
    fn volume_fraction_inverts_the_stress() {
        let s = stress();
        for phi in [0.12001, 0.2, 0.35, 0.6] {
            let back = s.volume_fraction(s.stress(phi));
            assert!(((back - phi) / phi).abs() < 1e-12, "{phi} -> {back}");
        }
        assert_eq!(s.volume_fraction(0.0), 0.12);
        assert_eq!(s.volume_fraction(-1.0), 0.12);
    }

    #[test]
    fn steady_sediment_refuses_bad_input() {
        let s = stress();
        let bad = |r: Result<SteadySediment, SteadySedimentError>, name: &str| match r {
            Err(SteadySedimentError::InvalidParameter { name: n, .. }) => assert_eq!(n, name),
            other => panic!("expected InvalidParameter({name}), got {other:?}"),
        };
        bad(
            s.steady_sediment(-1.0, 9.81, 0.05, 1.0, 0.6),
            "density excess Δρ",
        );
        bad(s.steady_sediment(1500.0, 0.0, 0.05, 1.0, 0.6), "gravity g");
        bad(
            s.steady_sediment(1500.0, 9.81, -0.1, 1.0, 0.6),
            "initial volume fraction φ0",
        );
        bad(
            s.steady_sediment(1500.0, 9.81, 0.05, f64::NAN, 0.6),
            "fill height H0",
        );
        bad(
            s.steady_sediment(1500.0, 9.81, 0.05, 1.0, 0.1),
            "packing limit φmax",
        );
        let mut soft = s;
        soft.exponent = 0.0;
        bad(
            soft.steady_sediment(1500.0, 9.81, 0.05, 1.0, 0.6),
            "exponent k",
        );
        soft = s;
        soft.gel_point = 1.0;
        bad(
            soft.steady_sediment(1500.0, 9.81, 0.05, 1.0, 0.6),
            "gel point φc",
        );
        soft = s;
        soft.yield_stress = f64::INFINITY;
        bad(
            soft.steady_sediment(1500.0, 9.81, 0.05, 1.0, 0.6),
            "yield stress σ0",
        );
    }

    #[test]
    fn zero_load_gives_an_empty_sediment() {
        let s = stress();
        let sed = s.steady_sediment(1500.0, 9.81, 0.0, 1.0, 0.6).unwrap();
        assert_eq!(sed.height, 0.0);
        assert_eq!(sed.bottom_volume_fraction, 0.12);
        assert_eq!(s.steady_profile(&sed, 0.0), 0.0);
    }
}
