//! Terminal settling velocity of a single particle: buoyant weight equals drag.
//!
//! Sign convention: velocities are positive downward, so a particle denser
//! than the fluid has a positive terminal velocity and a lighter one a
//! negative (rising) velocity of the magnitude it would have with |ρp − ρf|.
//! Reynolds numbers are magnitudes.

use std::f64::consts::PI;

use super::drag::DragLaw;
use super::{Fluid, Particle};

/// A particle at terminal velocity.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Terminal {
    /// Terminal velocity [m/s], positive downward.
    pub velocity: f64,
    /// Particle Reynolds number ρf |v| d / μ at that velocity [-].
    pub reynolds: f64,
    /// Drag coefficient of the law at that Reynolds number [-]; infinite when
    /// the velocity is zero (every law tends to 24/Re there).
    pub drag_coefficient: f64,
}

/// Relative tolerance on Re of the root search (absolute on ln Re).
const LN_RE_TOLERANCE: f64 = 1e-13;

/// Stokes terminal velocity v = (ρp − ρf) g d² / (18 μ) [m/s], with `g`
/// [m/s²]. Exact for creeping flow (Re → 0); already 11 % too fast for
/// 100 µm quartz in water, where Re ≈ 0.8 (physics.md §1.9).
pub fn stokes_velocity(p: &Particle, f: &Fluid, g: f64) -> f64 {
    (p.density - f.density) * g * p.diameter * p.diameter / (18.0 * f.viscosity)
}

/// Terminal velocity of particle `p` in fluid `f` under gravity `g` [m/s²]
/// with drag law `law`: the speed at which (ρp − ρf) g π d³/6 equals
/// C_D(Re)·½ ρf v² π d²/4.
///
/// * `Stokes` and `TwoTerm` use closed forms; for F = k1 v + k2 v² and
///   buoyant weight W the root is v = 2W / (k1 + √(k1² + 4 k2 W)), the
///   cancellation-free form of physics.md §1.4.
/// * Every other law solves the Best-number equation C_D(Re)·Re² = (4/3)·Ar,
///   which does not involve the velocity, for Re (Ar =
///   [`Particle::archimedes_number`]). Since C_D ≥ 24/Re for every law the root
///   lies in (0, Ar/18]. The search runs on ln Re piece by piece between the
///   law's [`DragLaw::breakpoints`], with regula falsi (Illinois variant) and
///   a bisection safeguard, to a relative tolerance of about 1e-13 in Re. It
///   always converges, from d = 0.1 µm to 100 mm and for any density ratio.
///
/// Two properties of piecewise laws (Clift et al., Schiller–Naumann):
///
/// * **Lowest root.** Where C_D·Re² is not monotone (the Clift et al. drag
///   crisis, Re ≈ 3.4–4×10⁵, where up to three Re balance the weight), the
///   lowest root is returned: a particle accelerating from rest reaches it
///   first. Terminal velocity then jumps up where d passes the crisis.
/// * **Jumps.** Where C_D jumps up at a branch boundary, a narrow range of Ar
///   has no exact root: drag is below the weight just under the boundary and
///   above it just over. The boundary Re itself is returned, where the
///   particle would hover, and the force balance is off by at most the jump
///   (< 1 %). The reported C_D is the law's value at that Re.
///
/// A zero diameter or density difference gives zero velocity and Re, and an
/// infinite C_D.
///
/// ```
/// use turbid_engine::physics::{Fluid, Particle, STANDARD_GRAVITY};
/// use turbid_engine::physics::drag::DragLaw;
/// use turbid_engine::physics::terminal::terminal_velocity;
/// let water = Fluid { density: 998.2, viscosity: 1.0016e-3 };
/// let quartz = Particle { diameter: 1e-3, density: 2650.0 };
/// let t = terminal_velocity(&DragLaw::CliftGraceWeber, &quartz, &water, STANDARD_GRAVITY);
/// assert!((t.velocity - 0.1578).abs() < 1e-3); // physics.md §1.9
/// ```
pub fn terminal_velocity(law: &DragLaw, p: &Particle, f: &Fluid, g: f64) -> Terminal {
    let d = p.diameter;
    let sign = if p.density < f.density { -1.0 } else { 1.0 };
    let speed = match *law {
        DragLaw::Stokes => stokes_velocity(p, f, g).abs(),
        DragLaw::TwoTerm { a, b } => {
            let k1 = a / 8.0 * PI * f.viscosity * d;
            let k2 = b / 8.0 * PI * f.density * d * d;
            let w = p.buoyant_weight(f, g).abs();
            if w == 0.0 {
                0.0
            } else {
                2.0 * w / (k1 + (k1 * k1 + 4.0 * k2 * w).sqrt())
            }
        }
        _ => {
            let best = 4.0 / 3.0 * p.archimedes_number(f, g).abs();
            if best == 0.0 {
                0.0
            } else {
                solve_best_number(law, best) * f.viscosity / (f.density * d)
            }
        }
    };
    let reynolds = p.reynolds(f, speed);
    Terminal {
        velocity: sign * speed,
        reynolds,
        drag_coefficient: law.drag_coefficient(reynolds),
    }
}

/// Lowest Re > 0 with `law.best_number(Re) = target` (> 0); see
/// [`terminal_velocity`] for the treatment of jumps.
fn solve_best_number(law: &DragLaw, target: f64) -> f64 {
    // C_D ≥ 24/Re gives best_number(target/24) ≥ target. Doubling only
    // matters for rounding, or for a law with a smaller low-Re constant
    // (a two-term law with a < 24, Ferguson–Church with C1 < 18).
    let mut re_max = target / 24.0;
    for _ in 0..2100 {
        if law.best_number(re_max) >= target {
            break;
        }
        re_max *= 2.0;
    }
    let residual = |re: f64| (law.best_number(re) / target).ln();

    // On each piece between breakpoints C_D·Re² is continuous and monotone.
    // Walking up from Re = 0, where the residual is negative, the first piece
    // whose ends are not both negative holds the lowest root.
    let ends = law
        .breakpoints()
        .iter()
        .copied()
        .filter(|&b| b < re_max)
        .chain(std::iter::once(re_max));
    let mut lower = 0.0_f64;
    for upper in ends {
        // Lower end as seen from inside this piece (each branch owns its
        // upper end, so `lower` itself belongs to the previous piece).
        let inside_lower = lower.next_up();
        let r_lower = if lower > 0.0 {
            residual(inside_lower)
        } else {
            f64::NEG_INFINITY
        };
        if r_lower >= 0.0 {
            // C_D jumped across the target at `lower`: no exact root.
            return lower;
        }
        let r_upper = residual(upper);
        if r_upper >= 0.0 {
            let (x_lo, r_lo) = if lower > 0.0 {
                (inside_lower.ln(), r_lower)
            } else {
                // First piece: step down a decade at a time from the upper
                // end; C_D·Re² → 0 as Re → 0, so this ends.
                let mut x = upper.ln();
                let mut r = r_upper;
                for _ in 0..800 {
                    x -= std::f64::consts::LN_10;
                    r = residual(x.exp());
                    if r < 0.0 {
                        break;
                    }
                }
                (x, r)
            };
            let in_piece = |x: f64| residual(x.exp().clamp(inside_lower, upper));
            let x = illinois(
                in_piece,
                (x_lo, r_lo),
                (upper.ln(), r_upper),
                LN_RE_TOLERANCE,
            );
            return x.exp().clamp(inside_lower, upper);
        }
        lower = upper;
    }
    f64::NAN // only for non-finite input
}

/// Root of a continuous increasing `h` in [a, b] with h(a) < 0 ≤ h(b):
/// regula falsi with the Illinois modification (halve the retained end's
/// value when the same end is kept twice), falling back to bisection whenever
/// two steps have not halved the bracket. Stops when the bracket is narrower
/// than `tol` or |h| is at rounding level, and returns the better end.
fn illinois(
    h: impl Fn(f64) -> f64,
    (mut a, mut ha): (f64, f64),
    (mut b, mut hb): (f64, f64),
    tol: f64,
) -> f64 {
    if hb == 0.0 {
        return b;
    }
    let mut kept = 0_i8; // −1: a was replaced last time, +1: b was.
    let mut width_two_steps_ago = b - a;
    for step in 0..200 {
        if b - a <= tol || !(ha < 0.0 && hb > 0.0) {
            break;
        }
        let width = b - a;
        let mut x = b - hb * (b - a) / (hb - ha);
        if step % 2 == 0 {
            if step > 0 && width > 0.5 * width_two_steps_ago {
                x = 0.5 * (a + b);
            }
            width_two_steps_ago = width;
        }
        if !(x > a && x < b) {
            x = 0.5 * (a + b);
        }
        let hx = h(x);
        if hx.abs() <= 4.0 * f64::EPSILON {
            return x;
        }
        if hx < 0.0 {
            a = x;
            ha = hx;
            if kept == -1 {
                hb *= 0.5;
            }
            kept = -1;
        } else {
            b = x;
            hb = hx;
            if kept == 1 {
                ha *= 0.5;
            }
            kept = 1;
        }
    }
    // The Illinois halving makes the stored values stale; compare afresh.
    if h(a).abs() < h(b).abs() { a } else { b }
}

/// Velocity relaxation time τ [s] of particle `p` in fluid `f` at terminal
/// state `t` (from [`terminal_velocity`]), including added mass.
///
/// The particle engine relaxes each particle's velocity exponentially toward
/// its terminal velocity, v ← v_t + (v − v_t)·exp(−Δt/τ), which is stable for
/// any time step. This τ comes from the equation of motion
/// m_eff dv/dt = W − F(v) with m_eff = (ρp + ½ρf)V (the sphere drags ½ρfV of
/// fluid along) when the drag is replaced by its secant through the terminal
/// state, F(v) ≈ F(v_t)·v/v_t: then dv/dt = (v_t − v)/τ with
///
/// τ = m_eff v_t / F(v_t) = (ρp + ½ρf)·4d / (3 C_D ρf v_t)
///   = (ρp + ½ρf)·4d² / (3 μ C_D·Re).
///
/// In Stokes flow this is (ρp + ½ρf) d²/(18μ), exact for the linear drag;
/// at higher Re the secant makes the relaxation reach the right terminal
/// velocity with the right initial rate from rest. At v_t = 0 (no density
/// difference) the Re → 0 limit C_D·Re = 24 is used, which gives the Stokes
/// value (for a two-term law with a ≠ 24 the exact limit would be a).
pub fn relaxation_time(p: &Particle, f: &Fluid, t: &Terminal) -> f64 {
    let cd_re = t.drag_coefficient * t.reynolds;
    let cd_re = if cd_re.is_finite() && cd_re > 0.0 {
        cd_re
    } else {
        24.0
    };
    (p.density + 0.5 * f.density) * 4.0 * p.diameter * p.diameter / (3.0 * f.viscosity * cd_re)
}

/// Drag force [N] on particle `p` moving at velocity `v` [m/s] relative to
/// fluid `f` under drag law `law`: F = C_D(Re)·½ ρf v²·π d²/4.
///
/// Computed as (π/8) μ d v·C_D·Re, which is finite (zero) at v = 0. The
/// result has the sign of `v` (F(−v) = −F(v)): it is the magnitude along the
/// direction of motion, and the force on the particle is −F(v).
pub fn drag_force(law: &DragLaw, p: &Particle, f: &Fluid, v: f64) -> f64 {
    let re = p.reynolds(f, v);
    PI / 8.0 * f.viscosity * p.diameter * v * law.cd_re(re)
}
