//! Drag laws for a single particle, each as a drag coefficient C_D(Re).
//!
//! C_D = F / (½ ρf v² · π d²/4) and Re = ρf v d / μ, both built on the
//! equal-volume diameter d. Every law here is a function of Re only (plus
//! shape constants), so one root search serves all of them
//! ([`crate::physics::terminal::terminal_velocity`]).
//!
//! # Conventions shared by all laws
//!
//! * Re is a magnitude: a negative argument is read as |Re| (drag does not
//!   depend on the direction of motion).
//! * C_D ~ 24/Re as Re → 0 for every law (a/Re for a [`DragLaw::TwoTerm`] law),
//!   so C_D itself is infinite at Re = 0. Code that needs finite numbers there
//!   uses [`DragLaw::cd_re`] (C_D·Re → 24) or [`DragLaw::best_number`]
//!   (C_D·Re² → 24·Re → 0) instead.
//! * Every law satisfies C_D ≥ 24/Re (Stokes drag is a lower bound) for the
//!   standard constants, which brackets the terminal-velocity root search.
//! * Piecewise laws are evaluated with each branch including its upper end;
//!   [`DragLaw::breakpoints`] lists the branch boundaries.

use super::{Fluid, Particle};

/// The drag laws turbid knows. Dimensionless: a dimensional two-term law
/// (F = k1·v + k2·v²) is turned into [`DragLaw::TwoTerm`] for its particle size
/// by [`DragLaw::two_term_from_coefficients`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum DragLaw {
    /// C_D = 24/Re.
    Stokes,
    /// Schiller & Naumann (1933), switched to 0.44 above Re = 1000.
    SchillerNaumann,
    /// Clift, Grace & Weber (1978) standard curve, Table 5.2, ten branches.
    CliftGraceWeber,
    /// Brown & Lawler (2003) eq. 19, valid to Re = 2×10⁵.
    BrownLawler,
    /// Haider & Levenspiel (1989) for non-spherical particles of sphericity ψ.
    HaiderLevenspiel { sphericity: f64 },
    /// Ferguson & Church (2004), written as its implied C_D(Re).
    FergusonChurch { c1: f64, c2: f64 },
    /// Two-term law C_D = a/Re + b, i.e. F = k1·v + k2·v² with
    /// k1 = (a/8) π μ d and k2 = (b/8) π ρf d².
    TwoTerm { a: f64, b: f64 },
}

/// Branch boundaries of the Clift, Grace & Weber (1978) Table 5.2 curve [-].
const CLIFT_GRACE_WEBER_BREAKS: [f64; 9] =
    [0.01, 20.0, 260.0, 1500.0, 1.2e4, 4.4e4, 3.38e5, 4e5, 1e6];

/// Re above which Schiller–Naumann is replaced by the Newton value 0.44 [-].
const SCHILLER_NAUMANN_SWITCH: f64 = 1000.0;

impl DragLaw {
    /// Ferguson & Church (2004) constants for smooth spheres:
    /// (C1, C2) = (18, 0.4). J. Sediment. Res. 74(6), 933–937, their Table 1
    /// [C] (physics.md §1.5). Re and d are the sphere diameter.
    pub const FERGUSON_CHURCH_SMOOTH_SPHERES: DragLaw =
        DragLaw::FergusonChurch { c1: 18.0, c2: 0.4 };

    /// Ferguson & Church (2004) constants for natural sand grains measured by
    /// sieve diameter: (C1, C2) = (18, 1.0). Same source and status as
    /// [`DragLaw::FERGUSON_CHURCH_SMOOTH_SPHERES`]. (The pairs (20, 1.1) for
    /// the nominal diameter and (24, 1.2) for very angular grains are quoted
    /// from memory in physics.md §1.5 [M] and are not provided here.)
    pub const FERGUSON_CHURCH_NATURAL_SIEVE: DragLaw =
        DragLaw::FergusonChurch { c1: 18.0, c2: 1.0 };

    /// Drag coefficient C_D [-] at particle Reynolds number `re` [-].
    ///
    /// Infinite at Re = 0 (every law tends to 24/Re there); see
    /// [`DragLaw::cd_re`] for a form that stays finite.
    ///
    /// Formulas (Re ≥ 0; w = log10 Re):
    /// * `Stokes`: 24/Re (Stokes 1851).
    /// * `SchillerNaumann`: 24/Re·(1 + 0.15 Re^0.687) for Re ≤ 1000, else 0.44
    ///   (Schiller & Naumann 1933 [formula C, range M], physics.md §1.3).
    /// * `CliftGraceWeber`: the ten branches A–J of Clift, Grace & Weber (1978)
    ///   Table 5.2, p. 112 [C], each branch including its upper end.
    /// * `BrownLawler`: 24/Re·(1 + 0.150 Re^0.681) + 0.407/(1 + 8710/Re),
    ///   Brown & Lawler (2003) eq. 19 [C], fitted for Re < 2×10⁵.
    /// * `HaiderLevenspiel`: 24/Re·(1 + A Re^B) + C/(1 + D/Re) with A, B, C, D
    ///   functions of the sphericity ψ, Haider & Levenspiel (1989) [C]; see
    ///   [`haider_levenspiel_coefficients`]. Fitted for Re < 2.6×10⁵.
    /// * `FergusonChurch`: the C_D(Re) implied by their settling law, see
    ///   [`ferguson_church_cd`].
    /// * `TwoTerm`: a/Re + b.
    pub fn drag_coefficient(&self, re: f64) -> f64 {
        let re = re.abs();
        self.cd_re(re) / re
    }

    /// C_D·Re [-]: finite everywhere, 24 at Re = 0 (a for a two-term law).
    ///
    /// This is the drag in units of the Stokes drag times 24:
    /// F = (π/8) μ d v · C_D·Re, which is why the force and the relaxation time
    /// are computed from it rather than from C_D.
    pub fn cd_re(&self, re: f64) -> f64 {
        let re = re.abs();
        match *self {
            DragLaw::Stokes => 24.0,
            DragLaw::SchillerNaumann => {
                if re <= SCHILLER_NAUMANN_SWITCH {
                    24.0 * (1.0 + 0.15 * re.powf(0.687))
                } else {
                    0.44 * re
                }
            }
            DragLaw::CliftGraceWeber => clift_grace_weber_cd_re(re),
            DragLaw::BrownLawler => {
                24.0 * (1.0 + 0.150 * re.powf(0.681)) + 0.407 * re * re / (re + 8710.0)
            }
            DragLaw::HaiderLevenspiel { sphericity } => {
                let [a, b, c, d] = haider_levenspiel_coefficients(sphericity);
                24.0 * (1.0 + a * re.powf(b)) + c * re * re / (re + d)
            }
            DragLaw::FergusonChurch { c1, c2 } => ferguson_church_cd_re(c1, c2, re),
            DragLaw::TwoTerm { a, b } => a + b * re,
        }
    }

    /// Best (or Davies) number C_D·Re² [-]: 0 at Re = 0 and ≈ 24·Re for small
    /// Re. At terminal velocity it equals (4/3)·Ar, which does not depend on
    /// the velocity; this is the equation the terminal-velocity solver uses.
    pub fn best_number(&self, re: f64) -> f64 {
        let re = re.abs();
        self.cd_re(re) * re
    }

    /// Reynolds numbers [-] at which the law switches branch, ascending.
    ///
    /// Between two consecutive breakpoints (and below the first, above the
    /// last) C_D is smooth and the Best number C_D·Re² is monotone. At a
    /// breakpoint C_D may jump: Clift et al. up by 0.18 % at Re = 0.01,
    /// 0.76 % at 20 and 0.59 % at 3.38×10⁵ and down by 21 % at 4×10⁵ (less
    /// than 0.07 % elsewhere); Schiller–Naumann up by 0.39 % at 1000. In the
    /// Clift et al. drag crisis (3.38×10⁵–4×10⁵) C_D·Re² decreases. Empty for
    /// the smooth laws.
    pub fn breakpoints(&self) -> &'static [f64] {
        match self {
            DragLaw::SchillerNaumann => &[SCHILLER_NAUMANN_SWITCH],
            DragLaw::CliftGraceWeber => &CLIFT_GRACE_WEBER_BREAKS,
            _ => &[],
        }
    }

    /// Short human-readable name of the law (ASCII, for logs and file
    /// attributes).
    pub fn name(&self) -> &'static str {
        match self {
            DragLaw::Stokes => "Stokes",
            DragLaw::SchillerNaumann => "Schiller-Naumann",
            DragLaw::CliftGraceWeber => "Clift-Grace-Weber",
            DragLaw::BrownLawler => "Brown-Lawler",
            DragLaw::HaiderLevenspiel { .. } => "Haider-Levenspiel",
            DragLaw::FergusonChurch { .. } => "Ferguson-Church",
            DragLaw::TwoTerm { .. } => "two-term",
        }
    }

    /// The dimensionless two-term law equivalent to the dimensional drag
    /// F = k1·v + k2·v² for particle `p` in fluid `f`.
    ///
    /// `k1` [N·s/m] is the linear (viscous) coefficient and `k2` [N·s²/m²] the
    /// quadratic one. Since F = (π/8) μ d v · (a + b·Re), matching terms gives
    /// a = 8 k1/(π μ d) and b = 8 k2/(π ρf d²). The result is specific to
    /// this diameter and fluid.
    pub fn two_term_from_coefficients(k1: f64, k2: f64, p: &Particle, f: &Fluid) -> DragLaw {
        let pi = std::f64::consts::PI;
        let d = p.diameter;
        DragLaw::TwoTerm {
            a: 8.0 * k1 / (pi * f.viscosity * d),
            b: 8.0 * k2 / (pi * f.density * d * d),
        }
    }

    /// Two-term law with the Stokes term and a Newton-regime drag
    /// coefficient `c_newton` = C∞ [-]: k1 = 3πμd and k2 = (π/8) ρf d² C∞, i.e.
    /// C_D = 24/Re + C∞ (physics.md §1.4 [P]). Its terminal velocity has a
    /// closed form and tends exactly to Stokes as d → 0 and to Newton,
    /// √(4Rgd/(3C∞)), as d → ∞. C∞ = 0.44 is the usual choice.
    ///
    /// This is the worked template for a drag law: dimensionless,
    /// a function of Re only, C_D·Re finite at Re = 0, C_D ≥ 24/Re.
    pub fn two_term_derived(c_newton: f64) -> DragLaw {
        DragLaw::TwoTerm {
            a: 24.0,
            b: c_newton,
        }
    }
}

/// C_D·Re of the Clift, Grace & Weber (1978) Table 5.2 curve, Re ≥ 0.
fn clift_grace_weber_cd_re(re: f64) -> f64 {
    if re <= 0.01 {
        // (A) Oseen-like correction of Stokes: C_D = 3/16 + 24/Re.
        return 3.0 / 16.0 * re + 24.0;
    }
    let w = re.log10();
    if re <= 20.0 {
        // (B)
        return 24.0 * (1.0 + 0.1315 * re.powf(0.82 - 0.05 * w));
    }
    if re <= 260.0 {
        // (C)
        return 24.0 * (1.0 + 0.1935 * re.powf(0.6305));
    }
    let cd = if re <= 1500.0 {
        // (D)
        pow10(1.6435 + w * (-1.1242 + w * 0.1558))
    } else if re <= 1.2e4 {
        // (E)
        pow10(-2.4571 + w * (2.5558 + w * (-0.9295 + w * 0.1049)))
    } else if re <= 4.4e4 {
        // (F)
        pow10(-1.9181 + w * (0.6370 - w * 0.0636))
    } else if re <= 3.38e5 {
        // (G)
        pow10(-4.3390 + w * (1.5809 - w * 0.1546))
    } else if re <= 4e5 {
        // (H) drag crisis: C_D falls from 0.48 to 0.09.
        29.78 - 5.3 * w
    } else if re <= 1e6 {
        // (I)
        0.1 * w - 0.49
    } else {
        // (J)
        0.19 - 8e4 / re
    };
    cd * re
}

fn pow10(x: f64) -> f64 {
    10f64.powf(x)
}

/// Haider & Levenspiel (1989) coefficients `[A, B, C, D]` of
/// C_D = 24/Re·(1 + A Re^B) + C/(1 + D/Re) for sphericity ψ [-] (0 < ψ ≤ 1):
///
/// * A = exp(2.3288 − 6.4581ψ + 2.4486ψ²)
/// * B = 0.0964 + 0.5565ψ
/// * C = exp(4.905 − 13.8944ψ + 18.4222ψ² − 10.2599ψ³)
/// * D = exp(1.4681 + 12.2584ψ − 20.7322ψ² + 15.8855ψ³)
///
/// Powder Technol. 58, 63–70 [C] (physics.md §1.6). Note that ψ = 1 does
/// not reproduce their separate sphere fit ([`haider_levenspiel_sphere`]);
/// the general form at ψ = 1 is higher by up to 6.7 % (near Re = 840).
pub fn haider_levenspiel_coefficients(sphericity: f64) -> [f64; 4] {
    let s = sphericity;
    [
        (2.3288 - 6.4581 * s + 2.4486 * s * s).exp(),
        0.0964 + 0.5565 * s,
        (4.905 - 13.8944 * s + 18.4222 * s * s - 10.2599 * s * s * s).exp(),
        (1.4681 + 12.2584 * s - 20.7322 * s * s + 15.8855 * s * s * s).exp(),
    ]
}

/// Haider & Levenspiel (1989) separate fit for spheres,
/// C_D = 24/Re·(1 + 0.1806 Re^0.6459) + 0.4251/(1 + 6880.95/Re), Re < 2.6×10⁵
/// [C] (physics.md §1.3). A check function (§9 #12); not a [`DragLaw`]
/// variant.
pub fn haider_levenspiel_sphere(re: f64) -> f64 {
    let re = re.abs();
    24.0 / re * (1.0 + 0.1806 * re.powf(0.6459)) + 0.4251 / (1.0 + 6880.95 / re)
}

/// The "standard drag curve" as fitted piecewise by Morsi & Alexander (1972),
/// J. Fluid Mech. 55, 193–208 [C coefficients] (physics.md §1.3):
/// C_D = a1/Re + a2/Re² + a3 on seven ranges from Re = 0.1 to 5×10⁴, and
/// 24/Re below 0.1. Each range includes its lower end, which reproduces their
/// Table 1 values 0.458 at Re = 10³ and 0.407 at 10⁴. Above 5×10⁴ the last
/// range is extrapolated. A check function (physics.md §9 #11), not a
/// [`DragLaw`] variant.
pub fn morsi_alexander(re: f64) -> f64 {
    const RANGES: [(f64, f64, f64, f64); 7] = [
        (1e4, -1662.5, 5.4167e6, 0.5191),
        (5000.0, -490.546, 57.87e4, 0.46),
        (1000.0, 148.62, -4.75e4, 0.3570),
        (100.0, 98.33, -2778.0, 0.3644),
        (10.0, 46.5, -116.67, 0.6167),
        (1.0, 29.1667, -3.8889, 1.222),
        (0.1, 22.73, 0.0903, 3.69),
    ];
    let re = re.abs();
    for (lower, a1, a2, a3) in RANGES {
        if re >= lower {
            return a1 / re + a2 / (re * re) + a3;
        }
    }
    24.0 / re
}

/// The drag coefficient implied by the Ferguson & Church (2004) settling law.
///
/// Their law w = R g d² / (C1 ν + √(0.75 C2 R g d³)) reads, in terms of
/// Re = w d/ν and Ar = R g d³/ν², Re·(C1 + √(0.75 C2 Ar)) = Ar. With s = √Ar
/// and k = √(0.75 C2) this is the quadratic s² − k Re s − C1 Re = 0, whose
/// positive root is s = Re·(k + √(k² + 4 C1/Re))/2. At terminal velocity
/// C_D = 4Ar/(3Re²), hence
///
/// C_D = (1/3)·(k + √(k² + 4 C1/Re))²,
///
/// which tends to 4C1/(3Re) (= 24/Re for C1 = 18) as Re → 0 and to C2 as
/// Re → ∞ [O] (own algebra; physics.md §1.5 for the law).
pub fn ferguson_church_cd(c1: f64, c2: f64, re: f64) -> f64 {
    let re = re.abs();
    ferguson_church_cd_re(c1, c2, re) / re
}

/// C_D·Re of the Ferguson–Church law, (1/3)(k√Re + √(k²Re + 4C1))², finite at
/// Re = 0 (= 4C1/3).
fn ferguson_church_cd_re(c1: f64, c2: f64, re: f64) -> f64 {
    let k2 = 0.75 * c2;
    let t = (k2 * re).sqrt() + (k2 * re + 4.0 * c1).sqrt();
    t * t / 3.0
}

/// Ferguson & Church (2004) explicit settling velocity [m/s] of particle `p`
/// in fluid `f` under gravity `g` [m/s²]:
///
/// w = R g d² / (C1 ν + √(0.75 C2 R g d³)),
///
/// J. Sediment. Res. 74(6), 933–937, eq. 4 [C] (physics.md §1.5), with
/// R = (ρp − ρf)/ρf and ν = μ/ρf. A particle lighter than the fluid gets a
/// negative (rising) velocity of the same magnitude as with |R|. Equal to
/// [`crate::physics::terminal::terminal_velocity`] with
/// `DragLaw::FergusonChurch { c1, c2 }`.
pub fn ferguson_church_velocity(c1: f64, c2: f64, p: &Particle, f: &Fluid, g: f64) -> f64 {
    let r = p.submerged_specific_gravity(f);
    let d = p.diameter;
    r * g * d * d / (c1 * f.kinematic_viscosity() + (0.75 * c2 * r.abs() * g * d * d * d).sqrt())
}
