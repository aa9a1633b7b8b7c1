//! Hindered settling: how neighbours slow a particle down.
//!
//! Every velocity here is the settling velocity of the solids relative to the
//! vessel in a closed batch column (zero volume-average velocity), positive
//! downward, as a function of the local solids volume fraction φ [-]. The
//! batch flux density is φ·v (physics.md §3).

/// Richardson & Zaki (1954) exponent n [-] from the particle's terminal
/// Reynolds number `re_terminal` [-] (built on the single-particle terminal
/// velocity V0) and the ratio `d_over_column` [-] of particle to column
/// diameter (0 for an unbounded suspension):
///
/// | Re              | n                          | eq.  |
/// |-----------------|----------------------------|------|
/// | Re < 0.2        | 4.65 + 19.5 d/D            | (33) |
/// | 0.2 ≤ Re < 1    | (4.35 + 17.5 d/D) Re^−0.03 | (37) |
/// | 1 ≤ Re < 200    | (4.45 + 18 d/D) Re^−0.1    | (38) |
/// | 200 ≤ Re < 500  | 4.45 Re^−0.1               | (39) |
/// | Re ≥ 500        | 2.39                       | (34) |
///
/// Trans. Instn Chem. Engrs 32, 35–53 [C] (physics.md §3.1). Each range
/// includes its lower end (the paper leaves the boundaries open). Stated
/// validity: Re from 2×10⁻⁴ to 7×10³, d/D ≤ 0.04. The branches do not join:
/// n jumps by 1.8 % at Re = 0.2, 2.3 % at Re = 1 and up to 14 % at Re = 200;
/// [`rz_exponent_rowe1987`] is a smooth alternative.
pub fn rz_exponent_1954(re_terminal: f64, d_over_column: f64) -> f64 {
    let re = re_terminal.abs();
    let l = d_over_column;
    if re < 0.2 {
        4.65 + 19.5 * l
    } else if re < 1.0 {
        (4.35 + 17.5 * l) * re.powf(-0.03)
    } else if re < 200.0 {
        (4.45 + 18.0 * l) * re.powf(-0.1)
    } else if re < 500.0 {
        4.45 * re.powf(-0.1)
    } else {
        2.39
    }
}

/// Rowe (1987) smooth fit of the Richardson–Zaki exponent [-],
/// n = (4.7 + 0.41 Re^0.75)/(1 + 0.175 Re^0.75), from 4.7 at Re → 0 to
/// 0.41/0.175 = 2.343 at Re → ∞; `re_terminal` [-] as in
/// [`rz_exponent_1954`]. Chem. Eng. Sci. 42(11), 2795–2796 [C formula]
/// (physics.md §3.2). No wall term.
pub fn rz_exponent_rowe1987(re_terminal: f64) -> f64 {
    let x = re_terminal.abs().powf(0.75);
    (4.7 + 0.41 * x) / (1.0 + 0.175 * x)
}

/// Garside & Al-Dibouni (1977) smooth fit of the Richardson–Zaki exponent
/// [-]: (5.1 − n)/(n − 2.7) = 0.1 Re^0.9, solved for n,
/// n = (5.1 + 2.7 q)/(1 + q) with q = 0.1 Re^0.9; from 5.1 at Re → 0 to 2.7 at
/// Re → ∞. Ind. Eng. Chem. Process Des. Dev. 16(2), 206–214. **The formula is
/// from memory and unconfirmed [M]** (physics.md §3.2); prefer
/// [`rz_exponent_rowe1987`] until it is checked against the paper.
pub fn rz_exponent_garside_al_dibouni1977(re_terminal: f64) -> f64 {
    let q = 0.1 * re_terminal.abs().powf(0.9);
    (5.1 + 2.7 * q) / (1.0 + q)
}

/// How the Richardson–Zaki exponent n is chosen for a particle.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ExponentRule {
    /// Richardson & Zaki (1954) piecewise law with the wall term
    /// ([`rz_exponent_1954`]); `d_over_column` is particle over column
    /// diameter [-].
    RichardsonZaki1954 { d_over_column: f64 },
    /// Rowe (1987) smooth fit ([`rz_exponent_rowe1987`]).
    Rowe1987,
    /// A fixed exponent [-], whatever the Reynolds number.
    Fixed(f64),
}

impl ExponentRule {
    /// The exponent n [-] for a particle of terminal Reynolds number
    /// `re_terminal` [-].
    pub fn exponent(&self, re_terminal: f64) -> f64 {
        match *self {
            ExponentRule::RichardsonZaki1954 { d_over_column } => {
                rz_exponent_1954(re_terminal, d_over_column)
            }
            ExponentRule::Rowe1987 => rz_exponent_rowe1987(re_terminal),
            ExponentRule::Fixed(n) => n,
        }
    }
}

/// Richardson–Zaki hindered settling velocity v = v∞ (1 − φ)^n [m/s], with
/// `v_terminal` = v∞ the single-particle terminal velocity [m/s], `phi` the
/// solids volume fraction [-] and `n` the exponent [-].
/// Richardson & Zaki (1954) eq. 28 with V_i = V0 (eq. 40) [C]. φ is clamped
/// to [0, 1], so the velocity is zero at φ ≥ 1 and v∞ at φ ≤ 0.
///
/// ```
/// use turbid_engine::physics::hindered::richardson_zaki;
/// // physics.md §9 #22: 0.9^4.65 = 0.612671
/// assert!((richardson_zaki(1.0, 0.1, 4.65) - 0.612671).abs() < 1e-6);
/// ```
pub fn richardson_zaki(v_terminal: f64, phi: f64, n: f64) -> f64 {
    v_terminal * (1.0 - phi.clamp(0.0, 1.0)).powf(n)
}

/// Michaels–Bolger type hindered settling velocity
/// v = v∞ (1 − φ/φmax)^n for φ < φmax and 0 at and above φmax [m/s], with
/// `v_terminal` = v∞ [m/s], `phi` and `phi_max` [-] and exponent `n` [-].
///
/// Michaels & Bolger (1962) applied Richardson–Zaki with n = 4.65 to the
/// aggregate volume fraction k_A φ [M]; this is the common modelling form with
/// k_A = 1/φmax [P] (physics.md §3.4), which brings the batch flux smoothly to
/// zero at φmax. Negative φ is read as 0.
pub fn michaels_bolger(v_terminal: f64, phi: f64, phi_max: f64, n: f64) -> f64 {
    if phi >= phi_max {
        return 0.0;
    }
    v_terminal * (1.0 - phi.max(0.0) / phi_max).powf(n)
}

/// Vesilind (1968) exponential settling velocity v = v0 exp(−k X) [m/s] of
/// activated sludge, with `v0` [m/s], `k` [m³/kg] and the suspended-solids
/// `mass_concentration` X [kg/m³]. Water & Sewage Works 115, 302–307 [M]
/// (physics.md §3.4); typical municipal sludge: v0 ≈ 4–12 m/h,
/// k ≈ 0.3–0.8 m³/kg [M]. Negative X is read as 0.
pub fn vesilind(v0: f64, k: f64, mass_concentration: f64) -> f64 {
    v0 * (-k * mass_concentration.max(0.0)).exp()
}

/// Takács double-exponential settling velocity of activated sludge [m/s]
/// (Takács, Patry & Nolasco 1991, Water Res. 25(10), 1263–1271 [M];
/// physics.md §3.4):
///
/// v = max(0, min(v0′, v0 [e^(−r_h (X − X_min)) − e^(−r_p (X − X_min))]))
///
/// with `v0_max` = v0′ the largest settling velocity [m/s], `v0` the
/// velocity scale [m/s], `r_hindered` = r_h [m³/kg] for the hindered zone,
/// `r_flocculant` = r_p [m³/kg] for the slowly settling (flocculant) zone at
/// low concentration, `min_concentration` = X_min [kg/m³], the
/// non-settleable solids (in the source X_min = f_ns·X_f, a fraction f_ns of
/// the feed concentration X_f, which the caller works out), and the
/// suspended-solids `mass_concentration` X [kg/m³].
///
/// With r_p > r_h the bracket is negative below X_min (so v = 0: those
/// solids do not settle), zero at X_min, rises to its maximum at
/// X_min + ln(r_p/r_h)/(r_p − r_h), where v0′ may cap it, then decays like
/// v0 e^(−r_h (X − X_min)). The velocity therefore grows with X at low
/// concentrations, unlike the other laws in this module.
pub fn takacs(
    v0_max: f64,
    v0: f64,
    r_hindered: f64,
    r_flocculant: f64,
    min_concentration: f64,
    mass_concentration: f64,
) -> f64 {
    let excess = mass_concentration - min_concentration;
    // e^(−r_h ΔX) − e^(−r_p ΔX) = −e^(−r_h ΔX)·expm1(−(r_p − r_h) ΔX): no
    // cancellation just above X_min.
    let bracket = -(-r_hindered * excess).exp() * (-(r_flocculant - r_hindered) * excess).exp_m1();
    (v0 * bracket).min(v0_max).max(0.0)
}

/// A hindered-settling law v(φ), chosen per scenario.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum HinderedLaw {
    /// [`richardson_zaki`] with exponent `n` [-].
    RichardsonZaki { n: f64 },
    /// [`michaels_bolger`] with exponent `n` [-].
    MichaelsBolger { n: f64 },
    /// [`vesilind`] with `v0` [m/s], `k` [m³/kg]; X = `solid_density`·φ with
    /// `solid_density` [kg/m³]. Ignores the particle's terminal velocity.
    Vesilind { v0: f64, k: f64, solid_density: f64 },
    /// [`takacs`] with `v0_max` = v0′ and `v0` [m/s], `r_hindered` = r_h and
    /// `r_flocculant` = r_p [m³/kg], `min_concentration` = X_min [kg/m³];
    /// X = `solid_density`·φ with `solid_density` [kg/m³]. Ignores the
    /// particle's terminal velocity.
    Takacs {
        v0_max: f64,
        v0: f64,
        r_hindered: f64,
        r_flocculant: f64,
        min_concentration: f64,
        solid_density: f64,
    },
}

impl HinderedLaw {
    /// Hindered settling velocity [m/s] at solids volume fraction `phi` [-],
    /// given the single-particle terminal velocity `v_terminal` [m/s] and the
    /// maximum packing fraction `phi_max` [-].
    ///
    /// Every law returns 0 at φ ≥ φmax: the packed bed does not settle further
    /// (consolidation is a separate term). For Richardson–Zaki, Vesilind and
    /// Takács this is a jump, since their own formulas are still positive
    /// there.
    pub fn velocity(&self, v_terminal: f64, phi: f64, phi_max: f64) -> f64 {
        if phi >= phi_max {
            return 0.0;
        }
        match *self {
            HinderedLaw::RichardsonZaki { n } => richardson_zaki(v_terminal, phi, n),
            HinderedLaw::MichaelsBolger { n } => michaels_bolger(v_terminal, phi, phi_max, n),
            HinderedLaw::Vesilind {
                v0,
                k,
                solid_density,
            } => vesilind(v0, k, solid_density * phi),
            HinderedLaw::Takacs {
                v0_max,
                v0,
                r_hindered,
                r_flocculant,
                min_concentration,
                solid_density,
            } => takacs(
                v0_max,
                v0,
                r_hindered,
                r_flocculant,
                min_concentration,
                solid_density * phi,
            ),
        }
    }

    /// Batch flux density φ·v(φ) [m/s] (volume of solids per unit area and
    /// time), the flux of the Kynch batch-settling conservation law.
    pub fn batch_flux(&self, v_terminal: f64, phi: f64, phi_max: f64) -> f64 {
        phi * self.velocity(v_terminal, phi, phi_max)
    }

    /// Short human-readable name of the law (ASCII).
    pub fn name(&self) -> &'static str {
        match self {
            HinderedLaw::RichardsonZaki { .. } => "Richardson-Zaki",
            HinderedLaw::MichaelsBolger { .. } => "Michaels-Bolger",
            HinderedLaw::Vesilind { .. } => "Vesilind",
            HinderedLaw::Takacs { .. } => "Takacs",
        }
    }
}
