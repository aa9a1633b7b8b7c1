//! Exact solution of Kynch's (1952) batch-sedimentation problem: a closed
//! column of height `H`, filled at `t = 0` with a uniform suspension of
//! volume fraction `φ0`, whose solids move by the kinematic law
//! `∂φ/∂t + ∂f(φ)/∂x = 0` (physics.md §5.1).
//!
//! # Conventions
//!
//! Internally `x` is the **depth** below the top of the column and a positive
//! speed points downward, as in physics.md §5. The public API speaks in
//! **heights above the floor**, `z = H − x`, and in upward (rise) speeds,
//! because that is what the engine reports.
//!
//! # Derivation of the wave structure
//!
//! *Boundary data.* The zero-flux walls are replaced by the states `φ = 0`
//! above the column and `φ = φmax` below it, with `f(0) = f(φmax) = 0`
//! (physics.md §5.1). The flux is truncated: `f(φ) = 0` for `φ ≥ φmax`, so it
//! may jump to zero there (Richardson–Zaki) or reach zero continuously
//! (the power-law form `(1 − φ/φmax)^n`).
//!
//! *Riemann problems.* At `t = 0` two Riemann problems start, one at each
//! wall. Their entropy solutions (Oleinik) follow the **lower convex
//! envelope** of `f` over the interval between the two states, because the
//! upper state is the smaller one in both (physics.md §5.1). Straight pieces
//! of the envelope are shocks with the Rankine–Hugoniot speed `[f]/[φ]`;
//! pieces where the envelope coincides with `f` are centred fans whose
//! characteristic carrying `φ` moves at `f'(φ)`.
//!
//! * Top, states `(0 | φ0)`: the envelope is the chord whenever the settling
//!   velocity `v(φ) = f(φ)/φ` satisfies `v(ψ) ≥ v(φ0)` for `0 < ψ ≤ φ0`
//!   (the chord test). The supernate/suspension interface is then one shock
//!   that descends at `v(φ0)`. This module requires the same chord test for
//!   every concentration that later lies just below the interface (see
//!   below); a hindered-settling velocity that never increases with `φ`
//!   passes it. Otherwise the interface itself would spread into a fan and
//!   the construction is refused with [`KynchError::Unsupported`].
//! * Bottom, states `(φ0 | φmax)`: the envelope of `f` on `[φ0, φmax]`,
//!   computed here for a **general** flux. A lower convex hull over a fine
//!   grid (8192 cells) finds which pieces are chords and which follow `f`;
//!   then every chord end that is not `φ0` or `φmax` is refined by root
//!   finding on the tangency condition `f'(q) = (f(q) − f(p))/(q − p)`
//!   (a bitangent, when both ends touch `f`, by nested root finding). For a
//!   flux with one inflection point (Richardson–Zaki) this reproduces the two
//!   cases of physics.md §5.2 item 2: a single sediment shock when the chord
//!   from `(φ0, f(φ0))` to `(φmax, 0)` lies below `f`, otherwise a shock
//!   `φ0 → φa`, a fan `φa → φb` and, when `f` jumps at `φmax`, a shock
//!   `φb → φmax`. The envelope is convex, non-negative and zero at `φmax`,
//!   so every bottom wave has a non-positive depth speed: it rises.
//!
//! *Interaction.* Call `R(ξ)` the self-similar bottom solution, `φ(x, t) =
//! R((x − H)/t)`, with `R = φ0` above the highest bottom wave. The interface
//! is a shock between `0` above and `R` below. By the chord test it is a Lax
//! shock: characteristics on both sides run into it, so nothing leaves it and
//! the solution below it stays `R((x − H)/t)` for all time. Hence
//! `φ(x, t) = 0` above the interface and `R((x − H)/t)` below it; by
//! Kružkov's uniqueness theorem this is the entropy solution.
//!
//! *The settling curve in closed form.* All the solids lie below the
//! interface `X(t)`, so with `ξ = (X − H)/t`
//!
//! ```text
//!   φ0 H = ∫_X^H R((x − H)/t) dx = t · M(ξ),   M(ξ) = ∫_ξ^0 R(η) dη.
//! ```
//!
//! With `g` the envelope, `R(ξ)` is the derivative of the Legendre conjugate
//! `g*(ξ) = max_φ (ξ φ − g(φ))`, and `g*(0) = −min g = 0`, so
//! `M(ξ) = −g*(ξ) = min_{φ0 ≤ φ ≤ φmax} (f(φ) − ξ φ) = f(R(ξ)) − ξ R(ξ)`, a continuous,
//! strictly decreasing function of `ξ ≤ 0` with `M(0) = 0`. So the interface
//! at time `t` is found from `M(ξ) = φ0 H / t` and `z = −ξ t`, with no time
//! integration at all:
//!
//! * in a constant state `φc` (the initial suspension, `φc = φ0`):
//!   `h(t) = (φ0 H − f(φc) t)/φc`, e.g. `h = H − v(φ0) t` before the first
//!   critical time;
//! * inside a fan, parametrised by the concentration `φ` just below the
//!   interface: `t (f(φ) − φ f'(φ)) = φ0 H` and `h = −f'(φ) t`. This is the
//!   first integral of the fan ODE `d ln t/dφ = f''/(f/φ − f')` of physics.md
//!   §5.2 item 4 (differentiate `ln(f − φ f')` to see it) and the identity
//!   quoted in item 5; the unit tests check it against an RK4 integration of
//!   that ODE;
//! * in the sediment (`φmax`): `h = φ0 H / φmax`, the final height.
//!
//! The critical times are the times at which `ξ` reaches the edge of a wave:
//! `t = φ0 H / M(ξ_edge)`. For the first one this is
//! `H / (v(φ0) − σ_up)` (physics.md §5.2 item 3). The final time is
//! `φ0 H / (φmax · s)` where `s` is the rise speed of the sediment surface; it
//! is infinite when the fan reaches `φmax` with `f'(φmax) = 0`.
//!
//! # Accuracy and limits
//!
//! With a closed-form `f'` the tangency points come out to ~1e-15 and the
//! settling curve to rounding; with the numerical `f'` to ~1e-12. A fan
//! narrower than one cell of the hull grid is still found (two chords
//! meeting at one grid vertex are refined separately). What is refused
//! rather than approximated: an interface that would not stay sharp (the
//! chord test above fails), an `f` with a corner where a tangency point
//! should be, and any envelope that fails the final convexity and Oleinik
//! checks.

use std::fmt;

// ---------------------------------------------------------------------------
// Flux functions
// ---------------------------------------------------------------------------

/// A batch flux density function `f(φ) = φ v(φ)` (downward solids volume flux,
/// m/s) of the solids volume fraction `φ`.
///
/// `flux` is the untruncated formula; the solver itself sets `f = 0` for
/// `φ ≥ φmax`. It is only evaluated on `[0, φmax]`, and must satisfy
/// `f(0) = 0` and `f > 0` on `(0, φmax)`.
pub trait BatchFlux: Send + Sync {
    /// `f(φ)` in m/s.
    fn flux(&self, phi: f64) -> f64;
    /// `f'(φ)` in m/s, if known in closed form. Without it the solver uses a
    /// fourth-order finite difference that stays inside `[0, φmax]`.
    fn dflux(&self, _phi: f64) -> Option<f64> {
        None
    }
}

/// Richardson & Zaki (1954) batch flux `f = v∞ φ (1 − φ)^n` (physics.md §3.1),
/// written here independently of the engine so that tests can compare them.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RichardsonZaki {
    /// Terminal velocity of a single particle `v∞` (m/s).
    pub v_inf: f64,
    /// Exponent `n` (4.65 in the creeping-flow limit, RZ 1954 eq. 33).
    pub n: f64,
}

impl RichardsonZaki {
    pub fn new(v_inf: f64, n: f64) -> Self {
        RichardsonZaki { v_inf, n }
    }

    /// Hindered settling velocity `v∞ (1 − φ)^n` (m/s).
    pub fn hindered_velocity(&self, phi: f64) -> f64 {
        self.v_inf * (1.0 - phi).max(0.0).powf(self.n)
    }

    /// Where `f` is largest: `1/(n + 1)` (physics.md §5.1).
    pub fn flux_maximum_at(&self) -> f64 {
        1.0 / (self.n + 1.0)
    }

    /// Inflection point of `f`: `2/(n + 1)`; `f` is concave below it and
    /// convex above (physics.md §5.1).
    pub fn inflection(&self) -> f64 {
        2.0 / (self.n + 1.0)
    }
}

impl BatchFlux for RichardsonZaki {
    fn flux(&self, phi: f64) -> f64 {
        phi * self.hindered_velocity(phi)
    }
    fn dflux(&self, phi: f64) -> Option<f64> {
        // d/dφ [φ (1−φ)^n] = (1−φ)^(n−1) (1 − (n+1) φ)
        let e = (1.0 - phi).max(0.0);
        Some(self.v_inf * e.powf(self.n - 1.0) * (1.0 - (self.n + 1.0) * phi))
    }
}

/// Power-law batch flux `f = v∞ φ (1 − φ/φmax)^n`, the common modelling form
/// that vanishes continuously at the packing limit (physics.md §3.4, common practice).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PowerLawFlux {
    /// Velocity scale `v∞` (m/s).
    pub v_inf: f64,
    /// Exponent `n`.
    pub n: f64,
    /// Packing limit at which the flux vanishes.
    pub phi_max: f64,
}

impl PowerLawFlux {
    pub fn new(v_inf: f64, n: f64, phi_max: f64) -> Self {
        PowerLawFlux { v_inf, n, phi_max }
    }
}

impl BatchFlux for PowerLawFlux {
    fn flux(&self, phi: f64) -> f64 {
        self.v_inf * phi * (1.0 - phi / self.phi_max).max(0.0).powf(self.n)
    }
    fn dflux(&self, phi: f64) -> Option<f64> {
        // d/dφ [φ g^n], g = 1 − φ/φmax: g^(n−1) (1 − (n+1) φ/φmax)
        let g = (1.0 - phi / self.phi_max).max(0.0);
        Some(self.v_inf * g.powf(self.n - 1.0) * (1.0 - (self.n + 1.0) * phi / self.phi_max))
    }
}

/// A flux given by a closure `φ ↦ f(φ)`; its derivative is taken numerically.
pub struct FnFlux<F>(pub F);

impl<F: Fn(f64) -> f64 + Send + Sync> BatchFlux for FnFlux<F> {
    fn flux(&self, phi: f64) -> f64 {
        (self.0)(phi)
    }
}

/// A flux given by two closures, `f` and its derivative `f'`.
pub struct FnFluxWithDerivative<F, D> {
    pub flux: F,
    pub dflux: D,
}

impl<F, D> BatchFlux for FnFluxWithDerivative<F, D>
where
    F: Fn(f64) -> f64 + Send + Sync,
    D: Fn(f64) -> f64 + Send + Sync,
{
    fn flux(&self, phi: f64) -> f64 {
        (self.flux)(phi)
    }
    fn dflux(&self, phi: f64) -> Option<f64> {
        Some((self.dflux)(phi))
    }
}

// ---------------------------------------------------------------------------
// Problem, results, errors
// ---------------------------------------------------------------------------

/// The batch test: a closed column of height `height` (m) filled with a
/// uniform suspension `phi0`, with packing limit `phi_max`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BatchProblem {
    pub phi0: f64,
    pub height: f64,
    pub phi_max: f64,
}

/// Kind of a wave issued from the bottom corner at `t = 0`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum WaveKind {
    /// A jump (Rankine–Hugoniot shock or contact discontinuity).
    Shock,
    /// A centred rarefaction fan; the characteristic carrying `φ` rises at
    /// `−f'(φ)`.
    Fan,
}

/// A wave of the bottom Riemann solution, in order from the highest one.
/// Every wave rises from the floor at constant speeds: its edges are at
/// heights `rise_speed_upper · t` and `rise_speed_lower · t` until the
/// interface reaches them.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Wave {
    pub kind: WaveKind,
    /// Concentration just above the wave.
    pub phi_above: f64,
    /// Concentration just below the wave.
    pub phi_below: f64,
    /// Rise speed (m/s) of the upper edge: `−f'(φ_above)` for a fan,
    /// `−[f]/[φ]` for a shock.
    pub rise_speed_upper: f64,
    /// Rise speed (m/s) of the lower edge (equal to the upper one for a shock).
    pub rise_speed_lower: f64,
}

/// The pattern of waves rising from the floor (the top wave is always a
/// single shock, the supernate/suspension interface).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Structure {
    /// One sediment shock `φ0 → φmax`; the interface meets it at the single
    /// critical time, which is the final time.
    ShockOnly,
    /// Shock `φ0 → φa`, fan `φa → φb`, sediment shock `φb → φmax`.
    ShockFanShock,
    /// Fan `φ0 → φb` (φ0 in the convex part of `f`), sediment shock `φb → φmax`.
    FanShock,
    /// Shock `φ0 → φa`, then a fan up to `φmax` (flux continuous at `φmax`).
    ShockFan,
    /// A single fan `φ0 → φmax`.
    FanOnly,
    /// Any other sequence (fluxes with several inflection points).
    Composite,
}

/// Why a solution could not be built.
#[derive(Debug, Clone, PartialEq)]
pub enum KynchError {
    /// Parameters outside the model (non-positive height, `φ0 ∉ (0, φmax)`,
    /// `f(0) ≠ 0`, `f ≤ 0` inside `(0, φmax)`, non-finite values).
    InvalidInput(String),
    /// The flux is valid but the solution has a form this module does not
    /// construct (a diffuse interface, or an envelope it cannot resolve).
    Unsupported(String),
}

impl fmt::Display for KynchError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            KynchError::InvalidInput(m) => write!(f, "invalid batch problem: {m}"),
            KynchError::Unsupported(m) => write!(f, "unsupported batch problem: {m}"),
        }
    }
}

impl std::error::Error for KynchError {}

// ---------------------------------------------------------------------------
// Solution
// ---------------------------------------------------------------------------

/// Number of cells of the grid on `[φ0, φmax]` used to locate the envelope.
const HULL_CELLS: usize = 8192;
/// Number of points of the grid on `(0, φmax]` used for the chord test.
const CHORD_TEST_POINTS: usize = 4096;

#[derive(Debug, Clone, Copy)]
enum RegionKind {
    Constant(f64),
    Fan { lo: f64, hi: f64 },
}

/// A range of similarity variables `ξ = (x − H)/t` (depth speeds) over which
/// the bottom solution is a constant state or a fan, with the times at which
/// the interface is there.
#[derive(Debug, Clone, Copy)]
struct Region {
    kind: RegionKind,
    xi_hi: f64,
    t_lo: f64,
    t_hi: f64,
}

/// The exact solution of one batch problem (see the module documentation).
pub struct KynchSolution {
    flux: Box<dyn BatchFlux>,
    problem: BatchProblem,
    waves: Vec<Wave>,
    regions: Vec<Region>,
    structure: Structure,
}

impl fmt::Debug for KynchSolution {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.debug_struct("KynchSolution")
            .field("problem", &self.problem)
            .field("structure", &self.structure)
            .field("waves", &self.waves)
            .field("critical_times", &self.critical_times())
            .finish()
    }
}

/// Piece of the lower convex hull, in grid indices.
#[derive(Debug, Clone, Copy)]
enum Piece {
    Chord(usize, usize),
    Fan(usize, usize),
}

impl KynchSolution {
    /// Build the exact solution for `flux` and `problem`.
    pub fn new<F: BatchFlux + 'static>(
        flux: F,
        problem: BatchProblem,
    ) -> Result<KynchSolution, KynchError> {
        let BatchProblem {
            phi0,
            height,
            phi_max,
        } = problem;
        if !(height.is_finite() && height > 0.0) {
            return Err(KynchError::InvalidInput(format!(
                "column height must be positive, got {height}"
            )));
        }
        if !(phi_max.is_finite() && phi_max > 0.0 && phi_max <= 1.0) {
            return Err(KynchError::InvalidInput(format!(
                "packing limit must lie in (0, 1], got {phi_max}"
            )));
        }
        if !(phi0.is_finite() && phi0 > 0.0 && phi0 < phi_max) {
            return Err(KynchError::InvalidInput(format!(
                "initial concentration must lie in (0, φmax = {phi_max}), got {phi0}"
            )));
        }
        let mut sol = KynchSolution {
            flux: Box::new(flux),
            problem,
            waves: Vec::new(),
            regions: Vec::new(),
            structure: Structure::ShockOnly,
        };
        sol.check_flux()?;
        sol.waves = sol.bottom_waves()?;
        sol.check_envelope()?;
        // Rounding may leave a characteristic speed of −1e-17 where the fan
        // reaches φmax with f'(φmax) = 0; rise speeds are non-negative.
        for w in &mut sol.waves {
            w.rise_speed_upper = w.rise_speed_upper.max(0.0);
            w.rise_speed_lower = w.rise_speed_lower.max(0.0);
        }
        sol.check_interface_admissible()?;
        sol.regions = sol.build_regions();
        sol.structure = classify(&sol.waves);
        Ok(sol)
    }

    /// The problem this solves.
    pub fn problem(&self) -> BatchProblem {
        self.problem
    }

    /// The truncated flux `f(φ)` (m/s): zero for `φ ≤ 0` and `φ ≥ φmax`.
    pub fn flux(&self, phi: f64) -> f64 {
        if phi <= 0.0 || phi >= self.problem.phi_max {
            0.0
        } else {
            self.flux.flux(phi)
        }
    }

    /// `f'(φ)` on `[0, φmax]` (the one-sided limit at `φmax`).
    pub fn flux_derivative(&self, phi: f64) -> f64 {
        if let Some(d) = self.flux.dflux(phi) {
            return d;
        }
        // Fourth-order difference with the stencil kept inside [0, φmax].
        let pm = self.problem.phi_max;
        let h = 1e-4 * pm;
        let f = |p: f64| self.flux.flux(p);
        // (A closure may already return 0 at φmax; the stencil never reaches it
        // from below, only a fan ending exactly at φmax evaluates f there.)
        if phi - 2.0 * h >= 0.0 && phi + 2.0 * h < pm {
            (f(phi - 2.0 * h) - 8.0 * f(phi - h) + 8.0 * f(phi + h) - f(phi + 2.0 * h)) / (12.0 * h)
        } else {
            let s = if phi + 2.0 * h > pm { -h } else { h };
            (-25.0 * f(phi) + 48.0 * f(phi + s) - 36.0 * f(phi + 2.0 * s) + 16.0 * f(phi + 3.0 * s)
                - 3.0 * f(phi + 4.0 * s))
                / (12.0 * s)
        }
    }

    /// Which pattern of bottom waves occurs.
    pub fn structure(&self) -> Structure {
        self.structure
    }

    /// The waves rising from the floor, highest first.
    pub fn waves(&self) -> &[Wave] {
        &self.waves
    }

    /// Initial settling velocity of the interface, `f(φ0)/φ0` (m/s).
    pub fn initial_settling_velocity(&self) -> f64 {
        self.flux(self.problem.phi0) / self.problem.phi0
    }

    /// Rise speed of the sediment surface (upper edge of the `φmax` layer),
    /// m/s; zero when a fan reaches `φmax` with `f'(φmax) = 0`.
    pub fn sediment_rise_speed(&self) -> f64 {
        self.waves.last().map_or(0.0, |w| w.rise_speed_lower)
    }

    /// Times (s) at which the interface passes from one region of the bottom
    /// solution into the next (enters a fan, leaves it, meets the sediment),
    /// ascending. The first is the classical critical time
    /// `H / (v(φ0) − σ_up)`; the last is the final time when that is finite.
    pub fn critical_times(&self) -> Vec<f64> {
        let mut out: Vec<f64> = Vec::new();
        for r in &self.regions[..self.regions.len() - 1] {
            if r.t_hi.is_finite() && out.last().is_none_or(|&last| r.t_hi > last) {
                out.push(r.t_hi);
            }
        }
        out
    }

    /// Time (s) at which the interface first leaves the straight line
    /// `H − v(φ0) t`.
    pub fn first_critical_time(&self) -> f64 {
        self.regions[0].t_hi
    }

    /// Time (s) at which the interface meets the sediment and stops;
    /// `f64::INFINITY` when the final height is only approached.
    pub fn final_time(&self) -> f64 {
        self.regions.last().map_or(f64::INFINITY, |r| r.t_lo)
    }

    /// Final height of the sediment, `φ0 H / φmax` (m), by mass conservation.
    pub fn final_height(&self) -> f64 {
        self.problem.phi0 * self.problem.height / self.problem.phi_max
    }

    /// Height (m) above the floor of the supernate/suspension interface at
    /// time `t` (s): the settling curve.
    pub fn interface_height(&self, t: f64) -> f64 {
        let p = self.problem;
        if t <= 0.0 {
            return p.height;
        }
        let (region, phi) = self.interface_region(t);
        match region.kind {
            RegionKind::Constant(pc) if pc >= p.phi_max => self.final_height(),
            RegionKind::Constant(pc) => (p.phi0 * p.height - self.flux(pc) * t) / pc,
            // Mass below the interface: φ h + f(φ) t = φ0 H (see module docs).
            RegionKind::Fan { .. } => -self.flux_derivative(phi) * t,
        }
    }

    /// Concentration just below the interface at time `t` (s).
    pub fn interface_concentration(&self, t: f64) -> f64 {
        if t <= 0.0 {
            return self.problem.phi0;
        }
        self.interface_region(t).1
    }

    /// Settling velocity of the interface `−dh/dt = f(φ)/φ` (m/s) at time `t`,
    /// with `φ` the concentration just below it (zero once it has stopped).
    pub fn interface_velocity(&self, t: f64) -> f64 {
        let phi = self.interface_concentration(t);
        self.flux(phi) / phi
    }

    /// Height (m) of the surface of the sediment at `φmax` at time `t` (s).
    pub fn bed_height(&self, t: f64) -> f64 {
        if t <= 0.0 {
            return 0.0;
        }
        (self.sediment_rise_speed() * t).min(self.final_height())
    }

    /// Exact concentration at height `z` (m above the floor) and time `t` (s).
    /// Outside the column it returns the extension states: `0` above `H`,
    /// `φmax` below the floor. At a discontinuity either side may be returned.
    pub fn profile(&self, z: f64, t: f64) -> f64 {
        let p = self.problem;
        if z > p.height {
            return 0.0;
        }
        if z < 0.0 {
            return p.phi_max;
        }
        if t <= 0.0 {
            return p.phi0;
        }
        if z > self.interface_height(t) {
            return 0.0;
        }
        self.similarity_state(-z / t)
    }

    // -- evaluation helpers ------------------------------------------------

    /// Bottom solution `R(ξ)` for a depth speed `ξ ≤ 0`.
    fn similarity_state(&self, xi: f64) -> f64 {
        for r in &self.regions {
            if xi <= r.xi_hi {
                return match r.kind {
                    RegionKind::Constant(pc) => pc,
                    RegionKind::Fan { lo, hi } => self.invert_speed(xi, lo, hi),
                };
            }
        }
        self.problem.phi_max
    }

    /// The `φ` in the fan `[lo, hi]` whose characteristic has depth speed `ξ`.
    fn invert_speed(&self, xi: f64, lo: f64, hi: f64) -> f64 {
        if xi <= self.flux_derivative(lo) {
            return lo;
        }
        if xi >= self.flux_derivative(hi) {
            return hi;
        }
        bisect(|p| self.flux_derivative(p) - xi, lo, hi).unwrap_or(0.5 * (lo + hi))
    }

    /// `M(ξ) = f(R) − ξ R` evaluated with the state of `kind`.
    fn mass_function(&self, kind: RegionKind, xi: f64) -> f64 {
        let phi = match kind {
            RegionKind::Constant(pc) => pc,
            RegionKind::Fan { lo, hi } => self.invert_speed(xi, lo, hi),
        };
        self.flux(phi) - xi * phi
    }

    /// Time at which the interface sits at similarity variable `ξ`.
    fn time_at(&self, kind: RegionKind, xi: f64) -> f64 {
        if xi == f64::NEG_INFINITY {
            return 0.0;
        }
        let m = self.mass_function(kind, xi);
        if m > 0.0 {
            self.problem.phi0 * self.problem.height / m
        } else {
            f64::INFINITY
        }
    }

    /// Region holding the interface at time `t > 0`, and the state below it.
    fn interface_region(&self, t: f64) -> (Region, f64) {
        let p = self.problem;
        let region = *self
            .regions
            .iter()
            .find(|r| t <= r.t_hi)
            .unwrap_or_else(|| self.regions.last().expect("at least two regions"));
        let phi = match region.kind {
            RegionKind::Constant(pc) => pc,
            RegionKind::Fan { lo, hi } => {
                // t (f(φ) − φ f'(φ)) = φ0 H, with f − φ f' decreasing in φ.
                let target = p.phi0 * p.height / t;
                let g = |q: f64| self.flux(q) - q * self.flux_derivative(q) - target;
                if g(lo) <= 0.0 {
                    lo
                } else if g(hi) >= 0.0 {
                    hi
                } else {
                    bisect(g, lo, hi).unwrap_or(hi)
                }
            }
        };
        (region, phi)
    }

    // -- construction ------------------------------------------------------

    /// Scale of the flux, for tolerances.
    fn flux_scale(&self) -> f64 {
        let pm = self.problem.phi_max;
        (1..64)
            .map(|i| self.flux(pm * i as f64 / 64.0))
            .fold(0.0, f64::max)
    }

    fn check_flux(&self) -> Result<(), KynchError> {
        let pm = self.problem.phi_max;
        let f0 = self.flux.flux(0.0);
        let scale = self.flux_scale();
        if !(scale.is_finite() && scale > 0.0) {
            return Err(KynchError::InvalidInput(
                "the flux must be positive and finite inside (0, φmax)".into(),
            ));
        }
        if f0.is_nan() || f0.abs() > 1e-12 * scale {
            return Err(KynchError::InvalidInput(format!(
                "the flux must vanish at φ = 0, got f(0) = {f0}"
            )));
        }
        for i in 1..CHORD_TEST_POINTS {
            let phi = pm * i as f64 / CHORD_TEST_POINTS as f64;
            let v = self.flux.flux(phi);
            if !(v.is_finite() && v > 0.0) {
                return Err(KynchError::InvalidInput(format!(
                    "the flux must be positive inside (0, φmax), got f({phi}) = {v}"
                )));
            }
        }
        Ok(())
    }

    /// Lower convex envelope of the truncated `f` on `[φ0, φmax]`, as waves.
    fn bottom_waves(&self) -> Result<Vec<Wave>, KynchError> {
        let p = self.problem;
        let (phi0, pm) = (p.phi0, p.phi_max);
        let n = HULL_CELLS;
        let xs: Vec<f64> = (0..=n)
            .map(|i| {
                if i == n {
                    pm
                } else {
                    phi0 + (pm - phi0) * i as f64 / n as f64
                }
            })
            .collect();
        let ys: Vec<f64> = xs.iter().map(|&x| self.flux(x)).collect();
        let scale = self.flux_scale();
        // Does f jump to zero at φmax (it does for Richardson–Zaki)?
        let jump = self.flux.flux(pm * (1.0 - 1e-12)) > 1e-9 * scale;

        // Andrew's monotone chain, lower hull (strict left turns kept).
        let mut hull: Vec<usize> = Vec::with_capacity(n + 1);
        for i in 0..=n {
            while hull.len() >= 2 {
                let (a, b) = (hull[hull.len() - 2], hull[hull.len() - 1]);
                let cross = (xs[b] - xs[a]) * (ys[i] - ys[a]) - (ys[b] - ys[a]) * (xs[i] - xs[a]);
                if cross <= 0.0 {
                    hull.pop();
                } else {
                    break;
                }
            }
            hull.push(i);
        }

        // Classify hull edges: chords (shocks) or runs of cells on f (fans).
        // A chord that stays within rounding of f is a fan piece as well.
        let gap_tol = 64.0 * f64::EPSILON * scale;
        let mut pieces: Vec<Piece> = Vec::new();
        for w in hull.windows(2) {
            let (i, j) = (w[0], w[1]);
            let is_chord = if j == n && jump {
                true
            } else if j == i + 1 {
                false
            } else {
                let slope = (ys[j] - ys[i]) / (xs[j] - xs[i]);
                (i + 1..j).any(|k| ys[k] - (ys[i] + slope * (xs[k] - xs[i])) > gap_tol)
            };
            match (is_chord, pieces.last_mut()) {
                (false, Some(Piece::Fan(_, end))) => *end = j,
                (false, _) => pieces.push(Piece::Fan(i, j)),
                (true, _) => {
                    // Two chords meeting at an interior vertex: a fan of
                    // sub-grid width lies between them.
                    if let Some(Piece::Chord(_, end)) = pieces.last()
                        && *end == i
                    {
                        pieces.push(Piece::Fan(i, i));
                    }
                    pieces.push(Piece::Chord(i, j));
                }
            }
        }

        // Refine each chord's ends on the tangency conditions.
        let mut chords: Vec<(f64, f64)> = Vec::new();
        for piece in &pieces {
            if let Piece::Chord(i, j) = *piece {
                chords.push(self.refine_chord(&xs, i, j)?);
            }
        }

        // Assemble the waves.
        let mut waves = Vec::new();
        let mut chord_iter = chords.iter();
        let mut k = 0;
        while k < pieces.len() {
            match pieces[k] {
                Piece::Chord(..) => {
                    let &(l, r) = chord_iter.next().expect("one refined chord per piece");
                    let speed = (self.flux(r) - self.flux(l)) / (r - l);
                    waves.push(Wave {
                        kind: WaveKind::Shock,
                        phi_above: l,
                        phi_below: r,
                        rise_speed_upper: -speed,
                        rise_speed_lower: -speed,
                    });
                }
                Piece::Fan(i, j) => {
                    let lo = match waves.last() {
                        Some(w) => w.phi_below,
                        None => xs[i],
                    };
                    let hi = if j == n {
                        pm
                    } else {
                        // the next piece is a chord: its refined left end
                        let mut look = chord_iter.clone();
                        look.next().map_or(xs[j], |c| c.0)
                    };
                    let width_tol = 1e-9 * (pm - phi0);
                    if hi < lo - width_tol {
                        return Err(KynchError::Unsupported(format!(
                            "inconsistent envelope near φ = {lo}: tangency points cross"
                        )));
                    }
                    if hi > lo + width_tol {
                        waves.push(Wave {
                            kind: WaveKind::Fan,
                            phi_above: lo,
                            phi_below: hi,
                            rise_speed_upper: -self.flux_derivative(lo),
                            rise_speed_lower: -self.flux_derivative(hi),
                        });
                    }
                }
            }
            k += 1;
        }
        Ok(waves)
    }

    /// Exact ends of the chord between hull vertices `i < j`: `φ0` and `φmax`
    /// are fixed, any other end is a point of tangency.
    fn refine_chord(&self, xs: &[f64], i: usize, j: usize) -> Result<(f64, f64), KynchError> {
        let n = xs.len() - 1;
        let left_fixed = i == 0;
        let right_fixed = j == n;
        let fail = |what: &str| {
            KynchError::Unsupported(format!(
                "could not resolve the tangency of the chord from φ ≈ {} to φ ≈ {} ({what})",
                xs[i], xs[j]
            ))
        };
        match (left_fixed, right_fixed) {
            (true, true) => Ok((xs[i], xs[j])),
            (true, false) => {
                let q = self
                    .tangent_from(xs[i], xs, j, xs[i], xs[n])
                    .ok_or_else(|| fail("right end"))?;
                Ok((xs[i], q))
            }
            (false, true) => {
                let q = self
                    .tangent_from(xs[j], xs, i, xs[0], xs[j])
                    .ok_or_else(|| fail("left end"))?;
                Ok((q, xs[j]))
            }
            (false, false) => {
                // Bitangent: for each a, b(a) touches f from (a, f(a)); then
                // solve for the a at which the chord is also tangent at a.
                let b_of = |a: f64| self.tangent_from(a, xs, j, a, xs[n]);
                let g = |a: f64| match b_of(a) {
                    Some(b) => self.flux_derivative(a) * (b - a) - (self.flux(b) - self.flux(a)),
                    None => f64::NAN,
                };
                let a = bracket_near(&g, xs, i, xs[0], xs[j]).ok_or_else(|| fail("bitangent"))?;
                let b = b_of(a).ok_or_else(|| fail("bitangent"))?;
                Ok((a, b))
            }
        }
    }

    /// Point `q` near grid index `k`, strictly between `lo` and `hi`, where
    /// the line from `(p, f(p))` touches `f`: `f'(q)(q − p) = f(q) − f(p)`.
    fn tangent_from(&self, p: f64, xs: &[f64], k: usize, lo: f64, hi: f64) -> Option<f64> {
        let fp = self.flux(p);
        let t = |q: f64| self.flux_derivative(q) * (q - p) - (self.flux(q) - fp);
        let (lo, hi) = if p <= lo { (lo, hi) } else { (lo, hi.min(p)) };
        bracket_near(&t, xs, k, lo, hi)
    }

    /// Verify that the waves form a convex minorant of `f` on `[φ0, φmax]`.
    fn check_envelope(&self) -> Result<(), KynchError> {
        let scale = self.flux_scale();
        let tol = 1e-9 * scale;
        let speed_tol = 1e-7 * scale.max(1e-300);
        let first = self.waves.first().ok_or_else(|| {
            KynchError::Unsupported("no wave found at the bottom of the column".into())
        })?;
        if (first.phi_above - self.problem.phi0).abs() > 1e-12 {
            return Err(KynchError::Unsupported(
                "envelope does not start at φ0".into(),
            ));
        }
        for w in self.waves.windows(2) {
            if w[1].rise_speed_upper > w[0].rise_speed_lower + speed_tol
                || (w[1].phi_above - w[0].phi_below).abs() > 1e-9
            {
                return Err(KynchError::Unsupported(format!(
                    "envelope not convex near φ = {}",
                    w[0].phi_below
                )));
            }
        }
        for w in &self.waves {
            if w.rise_speed_lower < -speed_tol {
                return Err(KynchError::Unsupported(
                    "a bottom wave would move downward".into(),
                ));
            }
            if w.kind == WaveKind::Shock {
                let (l, r) = (w.phi_above, w.phi_below);
                let (fl, s) = (self.flux(l), -w.rise_speed_upper);
                for m in 1..256 {
                    let q = l + (r - l) * m as f64 / 256.0;
                    if self.flux(q) < fl + s * (q - l) - tol {
                        return Err(KynchError::Unsupported(format!(
                            "shock {l} → {r} violates the Oleinik condition at φ = {q}"
                        )));
                    }
                }
            }
        }
        Ok(())
    }

    /// The interface is a shock `0 → φ` for every `φ` met below it; each must
    /// pass the chord test `v(ψ) ≥ v(φ)` for `0 < ψ ≤ φ` (Oleinik).
    fn check_interface_admissible(&self) -> Result<(), KynchError> {
        let pm = self.problem.phi_max;
        let v = |q: f64| self.flux(q) / q;
        // States below the interface, ascending.
        let mut states = vec![self.problem.phi0];
        for w in &self.waves {
            match w.kind {
                WaveKind::Fan => {
                    for m in 0..=64 {
                        states.push(w.phi_above + (w.phi_below - w.phi_above) * m as f64 / 64.0);
                    }
                }
                WaveKind::Shock => states.push(w.phi_below),
            }
        }
        states.retain(|&s| s < pm);
        states.sort_by(f64::total_cmp);
        let mut run_min = f64::INFINITY;
        let mut g = 1;
        for &s in &states {
            while g <= CHORD_TEST_POINTS {
                let psi = pm * g as f64 / CHORD_TEST_POINTS as f64;
                if psi > s {
                    break;
                }
                run_min = run_min.min(v(psi));
                g += 1;
            }
            if v(s) > run_min * (1.0 + 1e-9) {
                return Err(KynchError::Unsupported(format!(
                    "the chord from (0, 0) to (φ = {s}, f) cuts f: the settling velocity \
                     increases with φ there, so the interface would spread into a fan"
                )));
            }
        }
        Ok(())
    }

    fn build_regions(&self) -> Vec<Region> {
        let pm = self.problem.phi_max;
        let mut kinds: Vec<(RegionKind, f64, f64)> = Vec::new();
        let speed_scale = self.initial_settling_velocity();
        let first_xi = -self.waves[0].rise_speed_upper;
        kinds.push((
            RegionKind::Constant(self.problem.phi0),
            f64::NEG_INFINITY,
            first_xi,
        ));
        for (k, w) in self.waves.iter().enumerate() {
            let (xi_up, xi_low) = (-w.rise_speed_upper, -w.rise_speed_lower);
            if w.kind == WaveKind::Fan {
                kinds.push((
                    RegionKind::Fan {
                        lo: w.phi_above,
                        hi: w.phi_below,
                    },
                    xi_up,
                    xi_low,
                ));
            }
            match self.waves.get(k + 1) {
                None => kinds.push((RegionKind::Constant(pm), xi_low.min(0.0), 0.0)),
                Some(next) => {
                    // A constant state between two waves only where the
                    // flux has a corner; smooth fluxes give zero-width gaps.
                    let xi_next = -next.rise_speed_upper;
                    if xi_next > xi_low + 1e-9 * speed_scale {
                        kinds.push((RegionKind::Constant(w.phi_below), xi_low, xi_next));
                    }
                }
            }
        }
        kinds
            .into_iter()
            .map(|(kind, xi_lo, xi_hi)| Region {
                kind,
                xi_hi,
                t_lo: self.time_at(kind, xi_lo),
                t_hi: self.time_at(kind, xi_hi),
            })
            .collect()
    }
}

fn classify(waves: &[Wave]) -> Structure {
    use WaveKind::{Fan, Shock};
    let kinds: Vec<WaveKind> = waves.iter().map(|w| w.kind).collect();
    match kinds.as_slice() {
        [Shock] => Structure::ShockOnly,
        [Shock, Fan, Shock] => Structure::ShockFanShock,
        [Fan, Shock] => Structure::FanShock,
        [Shock, Fan] => Structure::ShockFan,
        [Fan] => Structure::FanOnly,
        _ => Structure::Composite,
    }
}

/// Bisection for a sign change of `g` on `[lo, hi]`, to machine precision.
fn bisect(mut g: impl FnMut(f64) -> f64, mut lo: f64, mut hi: f64) -> Option<f64> {
    let mut glo = g(lo);
    let ghi = g(hi);
    if !(glo.is_finite() && ghi.is_finite()) {
        return None;
    }
    if glo == 0.0 {
        return Some(lo);
    }
    if ghi == 0.0 {
        return Some(hi);
    }
    if glo.signum() == ghi.signum() {
        return None;
    }
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if mid <= lo || mid >= hi {
            break;
        }
        let gm = g(mid);
        if !gm.is_finite() {
            return None;
        }
        if gm == 0.0 {
            return Some(mid);
        }
        if gm.signum() == glo.signum() {
            lo = mid;
            glo = gm;
        } else {
            hi = mid;
        }
    }
    Some(0.5 * (lo + hi))
}

/// Root of `g` near grid point `xs[k]`: try brackets of 1, 2, 4, … cells on
/// each side, kept strictly inside `(lo, hi)`.
fn bracket_near(g: &dyn Fn(f64) -> f64, xs: &[f64], k: usize, lo: f64, hi: f64) -> Option<f64> {
    let n = xs.len() - 1;
    let inset = 1e-12 * (hi - lo);
    let (lo, hi) = (lo + inset, hi - inset);
    let mut w = 1;
    while w <= n {
        let a = xs[k.saturating_sub(w)].max(lo);
        let b = xs[(k + w).min(n)].min(hi);
        if a < b
            && let Some(r) = bisect(g, a, b)
        {
            return Some(r);
        }
        if a <= lo && b >= hi {
            break;
        }
        w *= 2;
    }
    None
}

#[cfg(test)]
mod tests {
    //! Every check states its source: an exact relation (Rankine–Hugoniot,
    //! tangency, mass conservation), the closed forms of physics.md §5.2, an
    //! independent RK4 integration of the fan ODE (§5.2 item 4), the Kynch
    //! construction (§5.2 item 5), or an independent Godunov finite-volume
    //! solution (§8.1) computed here.

    use super::*;
    use crate::assert_rel;

    // Richardson–Zaki case of physics.md §5.1: n = 4.65, v∞ = 1 mm/s, packing
    // at random close packing φmax = 0.64 (§3.5), a 1 m column.
    const V_INF: f64 = 1e-3;
    const N_RZ: f64 = 4.65;
    const PHI_MAX: f64 = 0.64;
    const H: f64 = 1.0;

    /// RZ batch flux, truncated at φmax, written out again independently of
    /// `RichardsonZaki` so that the checks do not reuse the code under test.
    fn rz(phi: f64) -> f64 {
        if phi <= 0.0 || phi >= PHI_MAX {
            0.0
        } else {
            V_INF * phi * (1.0 - phi).powf(N_RZ)
        }
    }

    /// f'(φ) of RZ: v∞ (1−φ)^(n−1) (1 − (n+1) φ) (product rule).
    fn rz_prime(phi: f64) -> f64 {
        V_INF * (1.0 - phi).powf(N_RZ - 1.0) * (1.0 - (N_RZ + 1.0) * phi)
    }

    /// f''(φ) of RZ: n (1−φ)^(n−2) ((n+1) φ − 2) v∞ (differentiating φ(1−φ)^n twice).
    fn rz_second(phi: f64) -> f64 {
        V_INF * N_RZ * (1.0 - phi).powf(N_RZ - 2.0) * ((N_RZ + 1.0) * phi - 2.0)
    }

    /// Central difference of `f` (step 1e-6): truncation ≈ 1e-12 f''', an
    /// independent check on analytic derivatives.
    fn fd(f: &dyn Fn(f64) -> f64, x: f64) -> f64 {
        let h = 1e-6;
        (f(x + h) - f(x - h)) / (2.0 * h)
    }

    fn rz_case(phi0: f64) -> KynchSolution {
        KynchSolution::new(
            RichardsonZaki::new(V_INF, N_RZ),
            BatchProblem {
                phi0,
                height: H,
                phi_max: PHI_MAX,
            },
        )
        .expect("valid RZ batch problem")
    }

    /// Smallest value of f − chord on (φ0, φmax), the chord joining
    /// (φ0, f(φ0)) to (φmax, 0) (physics.md §5.2 item 2): positive means the
    /// chord lies below f (a single sediment shock), negative means a fan.
    fn chord_margin(f: &dyn Fn(f64) -> f64, phi0: f64, phi_max: f64) -> (f64, f64) {
        let f0 = f(phi0);
        let slope = -f0 / (phi_max - phi0);
        (1..4000)
            .map(|i| {
                let q = phi0 + (phi_max - phi0) * i as f64 / 4000.0;
                (f(q) - (f0 + slope * (q - phi0)), q)
            })
            .fold((f64::INFINITY, 0.0), |a, b| if b.0 < a.0 { b } else { a })
    }

    /// Gauss–Legendre nodes and weights on [−1, 1] (Newton on P_m).
    fn gauss_legendre(m: usize) -> Vec<(f64, f64)> {
        (1..=m)
            .map(|i| {
                let mut x = (std::f64::consts::PI * (i as f64 - 0.25) / (m as f64 + 0.5)).cos();
                let mut dp = 0.0;
                for _ in 0..100 {
                    let (mut p0, mut p1) = (1.0, x);
                    for k in 2..=m {
                        let p2 = ((2 * k - 1) as f64 * x * p1 - (k - 1) as f64 * p0) / k as f64;
                        p0 = p1;
                        p1 = p2;
                    }
                    dp = m as f64 * (x * p1 - p0) / (x * x - 1.0);
                    let dx = p1 / dp;
                    x -= dx;
                    if dx.abs() < 1e-16 {
                        break;
                    }
                }
                (x, 2.0 / ((1.0 - x * x) * dp * dp))
            })
            .collect()
    }

    /// ∫₀ᴴ φ(z, t) dz by Gauss–Legendre quadrature of `profile`, split at the
    /// interface, the sediment surface and the wave edges (from the public
    /// API), where the profile is discontinuous or has corners.
    fn column_inventory(sol: &KynchSolution, t: f64) -> f64 {
        let h = sol.problem().height;
        let mut cuts = vec![0.0, h, sol.interface_height(t), sol.bed_height(t)];
        for w in sol.waves() {
            cuts.push(w.rise_speed_upper * t);
            cuts.push(w.rise_speed_lower * t);
        }
        let mut cuts: Vec<f64> = cuts.into_iter().map(|c| c.clamp(0.0, h)).collect();
        cuts.sort_by(f64::total_cmp);
        cuts.dedup();
        let gl = gauss_legendre(16);
        let mut total = 0.0;
        for c in cuts.windows(2) {
            // Subintervals graded towards the floor, where a fan reaching φmax
            // with f'(φmax) = 0 has φmax − φ ∝ z^(1/(n−1)).
            let sub = 64;
            let grade = if c[0] == 0.0 { 4 } else { 1 };
            let node = |s: usize| c[0] + (c[1] - c[0]) * (s as f64 / sub as f64).powi(grade);
            for s in 0..sub {
                let (a, b) = (node(s), node(s + 1));
                let (mid, half) = (0.5 * (a + b), 0.5 * (b - a));
                for &(x, w) in &gl {
                    total += half * w * sol.profile(mid + half * x, t);
                }
            }
        }
        total
    }

    /// Godunov numerical flux (physics.md §8.1) for the upper cell `u` and the
    /// lower cell `v`: min of f on [u, v] if u ≤ v, else max on [v, u]. The
    /// extremum is attained at an end or at an interior local extremum of f,
    /// so evaluating f at the ends and at `extrema` inside is exact.
    fn godunov_flux(f: &dyn Fn(f64) -> f64, extrema: &[f64], u: f64, v: f64) -> f64 {
        let (a, b) = if u <= v { (u, v) } else { (v, u) };
        let inner = extrema.iter().filter(|&&e| a < e && e < b).map(|&e| f(e));
        let ends = [f(u), f(v)];
        if u <= v {
            ends.into_iter().chain(inner).fold(f64::INFINITY, f64::min)
        } else {
            ends.into_iter()
                .chain(inner)
                .fold(f64::NEG_INFINITY, f64::max)
        }
    }

    /// Explicit first-order Godunov scheme for the closed column (physics.md
    /// §8 with zero flux through top and floor), CFL 0.9 (§8.4). Returns the
    /// cell values at each requested time, cell 0 at the top.
    ///
    /// Where f jumps to 0 at φmax (Richardson–Zaki), a cell just below φmax
    /// still takes in λ f(φ) per step and can overshoot φmax by up to
    /// λ f(φmax⁻) (≈ 0.005 here, cells reach 0.645); the excess does not
    /// shrink with Δx at a fixed CFL number, so this scheme's sediment is
    /// slightly too dense and its final height ~1e-3 H too low. The
    /// comparisons therefore stop at 0.98 tf for such fluxes.
    fn godunov_column(
        f: &dyn Fn(f64) -> f64,
        extrema: &[f64],
        phi0: f64,
        height: f64,
        cells: usize,
        max_speed: f64,
        times: &[f64],
    ) -> Vec<Vec<f64>> {
        let dx = height / cells as f64;
        let dt_max = 0.9 * dx / max_speed;
        let mut phi = vec![phi0; cells];
        let mut flux = vec![0.0; cells + 1];
        let mut t = 0.0;
        let mut out = Vec::new();
        for &t_out in times {
            while t_out - t > 1e-12 * t_out {
                let dt = dt_max.min(t_out - t);
                for j in 1..cells {
                    flux[j] = godunov_flux(f, extrema, phi[j - 1], phi[j]);
                }
                let lam = dt / dx;
                for j in 0..cells {
                    phi[j] -= lam * (flux[j + 1] - flux[j]);
                }
                t += dt;
            }
            out.push(phi.clone());
        }
        out
    }

    /// Height of the supernate/suspension interface in a finite-volume
    /// profile: the half-height crossing of the jump from 0 to the plateau
    /// just below it, linearly interpolated between cell centres.
    fn fv_interface(phi: &[f64], height: f64) -> f64 {
        let dx = height / phi.len() as f64;
        let j0 = phi.iter().position(|&p| p > 1e-6).unwrap_or(phi.len() - 1);
        let plateau = phi[(j0 + 3).min(phi.len() - 1)];
        let c = 0.5 * plateau;
        let j = (j0..phi.len()).find(|&j| phi[j] >= c).unwrap_or(j0);
        let x = if j == 0 {
            0.5 * dx
        } else {
            let (a, b) = (phi[j - 1], phi[j]);
            (j as f64 - 0.5) * dx + (c - a) / (b - a) * dx
        };
        height - x
    }

    /// Invented flux with two concave→convex turns (RZ times a smooth 60 %
    /// step down of the velocity at φ = 0.25): v = f/φ still decreases, so
    /// the interface stays sharp, but the bottom envelope has two fans.
    fn stepped(phi: f64) -> f64 {
        if phi <= 0.0 || phi >= PHI_MAX {
            return 0.0;
        }
        let step = 1.0 / (1.0 + (-(phi - 0.25) / 0.01).exp());
        V_INF * phi * (1.0 - phi).powf(N_RZ) * (1.0 - 0.6 * step)
    }

    fn stepped_case() -> KynchSolution {
        KynchSolution::new(
            FnFlux(stepped),
            BatchProblem {
                phi0: 0.1,
                height: H,
                phi_max: PHI_MAX,
            },
        )
        .expect("valid stepped-flux problem")
    }

    fn power_law_case(phi0: f64) -> KynchSolution {
        KynchSolution::new(
            PowerLawFlux::new(V_INF, N_RZ, PHI_MAX),
            BatchProblem {
                phi0,
                height: H,
                phi_max: PHI_MAX,
            },
        )
        .expect("valid power-law problem")
    }

    /// v∞ φ (1 − φ/φmax)^n written out again (physics.md §3.4 [P]).
    fn power_law(phi: f64) -> f64 {
        if phi <= 0.0 || phi >= PHI_MAX {
            0.0
        } else {
            V_INF * phi * (1.0 - phi / PHI_MAX).powf(N_RZ)
        }
    }

    /// Interior local extrema of `f` on (0, φmax), located on a fine grid,
    /// for the Godunov flux.
    fn local_extrema(f: &dyn Fn(f64) -> f64) -> Vec<f64> {
        let m = 200_000;
        let g: Vec<f64> = (0..=m).map(|i| f(PHI_MAX * i as f64 / m as f64)).collect();
        (1..m)
            .filter(|&i| (g[i] - g[i - 1]) * (g[i + 1] - g[i]) <= 0.0)
            .map(|i| PHI_MAX * i as f64 / m as f64)
            .collect()
    }

    /// Every shock of the bottom solution satisfies Rankine–Hugoniot for `f`
    /// and the Oleinik chord condition (chord below `f` on its interval), and
    /// every shock end adjacent to a fan is a point of tangency; fan edges
    /// move with the characteristic speed f'. Derivatives by central
    /// differences of `f`, independent of the solver's.
    fn check_waves(sol: &KynchSolution, f: &dyn Fn(f64) -> f64, what: &str) {
        let waves = sol.waves();
        let scale = V_INF * 1e-9;
        for (k, w) in waves.iter().enumerate() {
            let (l, r) = (w.phi_above, w.phi_below);
            match w.kind {
                WaveKind::Shock => {
                    let rh = -(f(r) - f(l)) / (r - l);
                    assert_rel(
                        w.rise_speed_upper,
                        rh,
                        1e-10,
                        &format!("{what}: RH speed {l} → {r}"),
                    );
                    for m in 1..1000 {
                        let q = l + (r - l) * m as f64 / 1000.0;
                        let chord = f(l) - rh * (q - l);
                        assert!(
                            f(q) >= chord - scale,
                            "{what}: Oleinik chord {l} → {r} above f at {q}"
                        );
                    }
                    let fan_above = k > 0 && waves[k - 1].kind == WaveKind::Fan;
                    let fan_below = waves.get(k + 1).is_some_and(|n| n.kind == WaveKind::Fan);
                    if fan_above || (k > 0 && waves[k - 1].kind == WaveKind::Shock) {
                        assert_rel(-fd(f, l), rh, 1e-7, &format!("{what}: tangency at {l}"));
                    }
                    if fan_below || (r < PHI_MAX && waves.get(k + 1).is_some()) {
                        assert_rel(-fd(f, r), rh, 1e-7, &format!("{what}: tangency at {r}"));
                    }
                }
                WaveKind::Fan => {
                    assert_rel(
                        w.rise_speed_upper,
                        -fd(f, l),
                        1e-7,
                        &format!("{what}: fan top"),
                    );
                    if r < PHI_MAX {
                        assert_rel(
                            w.rise_speed_lower,
                            -fd(f, r),
                            1e-7,
                            &format!("{what}: fan end"),
                        );
                    }
                    // A fan follows f where f is convex.
                    for m in 0..=20 {
                        let q = l + (r - l) * m as f64 / 20.0;
                        let q = q.clamp(l + 1e-5, r - 1e-5);
                        let second = (f(q + 1e-4) - 2.0 * f(q) + f(q - 1e-4)) / 1e-8;
                        assert!(
                            second >= -1e-9 * V_INF,
                            "{what}: fan over non-convex f at {q}"
                        );
                    }
                }
            }
        }
        // Consecutive waves are in contact (no gap for a smooth flux).
        for w in waves.windows(2) {
            assert!(
                (w[0].phi_below - w[1].phi_above).abs() < 1e-12,
                "{what}: wave gap"
            );
        }
    }

    #[test]
    fn richardson_zaki_flux_matches_reference_values() {
        let rzf = RichardsonZaki::new(V_INF, N_RZ);
        // physics.md §9 #21 [O]: argmax, f_max/v∞, inflection for n = 4.65, tol 1e-5.
        assert_rel(rzf.flux_maximum_at(), 0.176991, 1e-5, "§9 #21 argmax");
        assert_rel(
            rzf.flux(rzf.flux_maximum_at()) / V_INF,
            0.0715455,
            1e-5,
            "§9 #21 f_max",
        );
        assert_rel(rzf.inflection(), 0.353982, 1e-5, "§9 #21 inflection");
        for i in 1..64 {
            let phi = 0.01 * i as f64;
            // RZ 1954 eq. 28 written independently above.
            assert_rel(
                rzf.flux(phi),
                V_INF * phi * (1.0 - phi).powf(N_RZ),
                1e-14,
                "RZ flux",
            );
            // Analytic derivatives against central differences.
            let d = rzf.dflux(phi).expect("analytic");
            assert!((d - fd(&rz, phi)).abs() < 1e-9 * V_INF, "RZ f'({phi})");
            assert!(
                (rz_prime(phi) - fd(&rz, phi)).abs() < 1e-9 * V_INF,
                "test f'({phi})"
            );
            let d2 = (rz_prime(phi + 1e-6) - rz_prime(phi - 1e-6)) / 2e-6;
            assert!(
                (rz_second(phi) - d2).abs() < 1e-7 * V_INF,
                "test f''({phi})"
            );
            let pl = PowerLawFlux::new(V_INF, N_RZ, PHI_MAX);
            let dp = pl.dflux(phi).expect("analytic");
            assert!(
                (dp - fd(&power_law, phi)).abs() < 1e-9 * V_INF,
                "power-law f'({phi})"
            );
        }
    }

    #[test]
    fn shock_only_case_low_loading() {
        let phi0 = 0.10;
        // Why this case: the chord from (φ0, f(φ0)) to (φmax, 0) lies below f
        // on the whole of (φ0, φmax) (physics.md §5.2 item 2), so the lower
        // convex envelope is that chord: one sediment shock.
        let (margin, at) = chord_margin(&rz, phi0, PHI_MAX);
        assert!(
            margin > 0.0,
            "chord above f at φ = {at} (margin {margin:e})"
        );
        let sol = rz_case(phi0);
        assert_eq!(sol.structure(), Structure::ShockOnly, "{sol:?}");
        check_waves(&sol, &rz, "shock-only");

        // Interface speed v(φ0) = v∞ (1−φ0)^n (RZ; physics.md §5.2 item 1).
        let v0 = V_INF * (1.0 - phi0).powf(N_RZ);
        assert_rel(sol.initial_settling_velocity(), v0, 1e-14, "v(φ0)");
        // Sediment rises at f(φ0)/(φmax − φ0) (RH with f(φmax) = 0, §5.2 item 2).
        let rise = rz(phi0) / (PHI_MAX - phi0);
        assert_rel(sol.sediment_rise_speed(), rise, 1e-13, "sediment RH speed");
        // They meet at t1 = H/(v0 + rise) (§5.2 item 3), which is the end.
        let t1 = H / (v0 + rise);
        let crit = sol.critical_times();
        assert_eq!(crit.len(), 1, "{crit:?}");
        assert_rel(crit[0], t1, 1e-12, "t1 (§5.2 item 3)");
        assert_rel(sol.final_time(), t1, 1e-12, "final time = t1");
        assert_rel(sol.first_critical_time(), t1, 1e-12, "first critical time");
        // Straight settling line and linear bed before t1 (exact).
        for frac in [0.1, 0.5, 0.9, 0.999_999] {
            let t = frac * t1;
            assert_rel(sol.interface_height(t), H - v0 * t, 1e-12, "h = H − v0 t");
            assert_rel(sol.bed_height(t), rise * t, 1e-12, "bed = rise · t");
            assert_rel(sol.interface_velocity(t), v0, 1e-12, "−dh/dt");
        }
        // Final height φ0 H/φmax (mass conservation, §5.3), reached at t1
        // continuously and kept afterwards.
        let hf = phi0 * H / PHI_MAX;
        assert_rel(sol.final_height(), hf, 1e-14, "final height");
        assert_rel(sol.interface_height(t1), hf, 1e-12, "h(t1)");
        assert_rel(H - v0 * t1, hf, 1e-12, "straight line reaches hf at t1");
        for t in [t1 * (1.0 + 1e-9), 2.0 * t1, 100.0 * t1] {
            assert_rel(sol.interface_height(t), hf, 1e-12, "h after t1");
            assert_rel(sol.bed_height(t), hf, 1e-12, "bed after t1");
            assert_eq!(sol.interface_velocity(t), 0.0);
        }
        // Profile: φ0 between bed and interface, 0 above, φmax below (§5.2).
        let t = 0.5 * t1;
        let (hi, hb) = (sol.interface_height(t), sol.bed_height(t));
        assert_eq!(sol.profile(0.5 * (hi + hb), t), phi0);
        assert_eq!(sol.profile(hi + 1e-9, t), 0.0);
        assert_eq!(sol.profile(hb - 1e-9, t), PHI_MAX);
        assert_eq!(sol.profile(0.3, 0.0), phi0);
        assert_eq!(sol.profile(0.5 * hf, 3.0 * t1), PHI_MAX);
        assert_eq!(sol.profile(hf + 1e-9, 3.0 * t1), 0.0);
    }

    #[test]
    fn shock_fan_shock_case_loading_below_inflection() {
        let phi0 = 0.30;
        // Why this case: the chord from (φ0, f(φ0)) to (φmax, 0) passes above
        // f somewhere in (φ0, φmax) (physics.md §5.2 item 2), so the envelope
        // leaves the chord: shock φ0 → φa, fan φa → φb, shock φb → φmax
        // (f jumps to 0 at φmax). φ0 < 2/(n+1), so f is concave at φ0 and the
        // fan cannot start at φ0.
        let (margin, at) = chord_margin(&rz, phi0, PHI_MAX);
        assert!(
            margin < 0.0,
            "chord below f everywhere (margin {margin:e} at {at})"
        );
        assert!(rz_second(phi0) < 0.0, "f concave at φ0");
        let sol = rz_case(phi0);
        assert_eq!(sol.structure(), Structure::ShockFanShock, "{sol:?}");
        check_waves(&sol, &rz, "shock-fan-shock");
        let w = sol.waves();
        let (pa, pb) = (w[1].phi_above, w[1].phi_below);
        // Tangency conditions of §5.2 item 2, with the independent f'.
        assert_rel(
            rz_prime(pa),
            (rz(pa) - rz(phi0)) / (pa - phi0),
            1e-9,
            "f'(φa) = chord",
        );
        assert_rel(
            rz_prime(pb),
            -rz(pb) / (PHI_MAX - pb),
            1e-9,
            "f'(φb) = chord",
        );

        let v0 = V_INF * (1.0 - phi0).powf(N_RZ);
        let sigma_up = -rz_prime(pa);
        // t1 = H/(v(φ0) − σ_up) with σ_up = f'(φa) < 0 (§5.2 item 3).
        let t1 = H / (v0 + sigma_up);
        assert_rel(sol.first_critical_time(), t1, 1e-9, "t1 (§5.2 item 3)");
        // Continuity of the settling curve at t1, where it meets the rising
        // shock: h(t1) = H − v0 t1 = σ_up t1.
        let d = 1e-7 * t1;
        let (before, after) = (sol.interface_height(t1 - d), sol.interface_height(t1 + d));
        assert!(
            (after - before).abs() <= 2.0 * v0 * d,
            "jump at t1: {before} → {after}"
        );
        assert_rel(
            sol.interface_height(t1),
            H - v0 * t1,
            1e-12,
            "h(t1) on the line",
        );
        assert_rel(
            sol.interface_height(t1),
            sigma_up * t1,
            1e-9,
            "h(t1) on the shock",
        );
        // The interface then crosses the contact φ0 → φa: its speed drops
        // from v(φ0) to v(φa) (a corner in the settling curve).
        let va = V_INF * (1.0 - pa).powf(N_RZ);
        assert_rel(sol.interface_velocity(t1 - d), v0, 1e-12, "speed before t1");
        assert_rel(sol.interface_velocity(t1 + d), va, 1e-5, "speed after t1");
        assert_rel(
            (before - after) / (2.0 * d),
            0.5 * (v0 + va),
            1e-4,
            "chord slope at t1",
        );

        // End: the interface meets the sediment shock (rise f(φb)/(φmax−φb))
        // at the final height φ0 H/φmax, so tf = hf/rise (mass conservation).
        let hf = phi0 * H / PHI_MAX;
        let rise = rz(pb) / (PHI_MAX - pb);
        let tf = hf / rise;
        assert_rel(sol.final_time(), tf, 1e-9, "final time");
        let crit = sol.critical_times();
        assert_eq!(crit.len(), 2, "{crit:?}");
        assert_rel(crit[1], tf, 1e-9, "second critical time = tf");
        let e = 1e-7 * tf;
        assert!(
            (sol.interface_height(tf - e) - hf).abs() <= 2.0 * va * e,
            "continuity at tf"
        );
        assert_rel(sol.interface_height(tf), hf, 1e-9, "h(tf)");
        assert_rel(sol.bed_height(tf), hf, 1e-9, "bed(tf)");
        assert_rel(sol.interface_height(5.0 * tf), hf, 1e-14, "h after tf");

        // In the fan phase the curve is concave up (§5.2 item 3), lies above
        // the sediment and below the continuation of the straight line.
        for k in 1..20 {
            let t = t1 + (tf - t1) * k as f64 / 20.0;
            let dt = 1e-3 * (tf - t1);
            let h = sol.interface_height(t);
            let curv = sol.interface_height(t + dt) - 2.0 * h + sol.interface_height(t - dt);
            assert!(curv > 0.0, "settling curve not concave up at {t}");
            assert!(
                h > sol.bed_height(t) && h < H - v0 * t + 1.0,
                "ordering at {t}"
            );
            // Interface state inside the fan, φa < φ < φb.
            let phi = sol.interface_concentration(t);
            assert!(pa < phi && phi < pb, "state {phi} at {t}");
        }
    }

    #[test]
    fn fan_shock_case_loading_above_inflection() {
        let phi0 = 0.40;
        // Why this case: φ0 > 2/(n+1) = 0.354, f is convex at φ0 with
        // f'(φ0) < 0, so the envelope follows f from φ0 (physics.md §5.3):
        // fan φ0 → φb, then shock φb → φmax.
        assert!(rz_second(phi0) > 0.0 && rz_prime(phi0) < 0.0);
        let (margin, _) = chord_margin(&rz, phi0, PHI_MAX);
        assert!(margin < 0.0);
        let sol = rz_case(phi0);
        assert_eq!(sol.structure(), Structure::FanShock, "{sol:?}");
        check_waves(&sol, &rz, "fan-shock");
        assert_eq!(sol.waves()[0].phi_above, phi0);
        let v0 = V_INF * (1.0 - phi0).powf(N_RZ);
        // t1 = H/(v(φ0) − f'(φ0)) (§5.2 item 3, the fan's leading edge).
        let t1 = H / (v0 - rz_prime(phi0));
        assert_rel(sol.first_critical_time(), t1, 1e-12, "t1");
        // No state jump at t1: the settling velocity is continuous there.
        let d = 1e-6 * t1;
        assert_rel(sol.interface_velocity(t1 + d), v0, 1e-5, "speed after t1");
        let slope_before = (sol.interface_height(t1 - 2.0 * d) - sol.interface_height(t1 - d)) / d;
        let slope_after = (sol.interface_height(t1 + d) - sol.interface_height(t1 + 2.0 * d)) / d;
        assert_rel(slope_after, slope_before, 1e-4, "C¹ at t1");
        let hf = phi0 * H / PHI_MAX;
        let pb = sol.waves()[0].phi_below;
        assert_rel(sol.final_time(), hf * (PHI_MAX - pb) / rz(pb), 1e-9, "tf");
        assert_rel(sol.interface_height(sol.final_time()), hf, 1e-9, "h(tf)");
    }

    #[test]
    fn mass_is_conserved_at_all_times() {
        // ∫₀ᴴ φ dz = φ0 H in a closed column (physics.md §9 #32), by
        // quadrature of `profile`, in every phase of each structure.
        let cases: Vec<(&str, KynchSolution, f64)> = vec![
            // Measured ≤ 5e-14 (analytic f'); 8e-12 with the numerical f'.
            ("RZ shock-only", rz_case(0.10), 1e-12),
            ("RZ shock-fan-shock", rz_case(0.30), 1e-12),
            ("RZ fan-shock", rz_case(0.40), 1e-12),
            ("power law shock-fan", power_law_case(0.10), 1e-12),
            ("stepped composite", stepped_case(), 1e-10),
        ];
        for (name, sol, tol) in &cases {
            let crit = sol.critical_times();
            let mut times = vec![0.25 * crit[0], 0.999 * crit[0]];
            for c in crit.windows(2) {
                times.extend([c[0] * 1.001, 0.5 * (c[0] + c[1]), c[1] * 0.999]);
            }
            let last = *crit.last().expect("one critical time");
            times.extend([1.001 * last, 3.0 * last, 30.0 * last]);
            for t in times {
                let m = column_inventory(sol, t);
                let p = sol.problem();
                assert_rel(
                    m,
                    p.phi0 * p.height,
                    *tol,
                    &format!("{name}: mass at t = {t:.1} s"),
                );
            }
        }
    }

    /// Integrate the fan ODE of physics.md §5.2 item 4,
    /// d ln t/dφ = f''/(f/φ − f') with x = H + f'(φ) t, from the fan's top
    /// state φa at t1 = H/(v(φ0) − f'(φa)) up to `phi_end`, with classical
    /// RK4 (4000 steps; the right side does not depend on t, so RK4 reduces
    /// to Simpson's rule), using independent f, f', f''. Returns the largest
    /// relative deviations of the solver's interface height and state, and
    /// the ODE's time at `phi_end`.
    fn fan_ode_deviation(
        sol: &KynchSolution,
        f: &dyn Fn(f64) -> f64,
        fp: &dyn Fn(f64) -> f64,
        fpp: &dyn Fn(f64) -> f64,
        phi_end: f64,
    ) -> (f64, f64, f64) {
        let p = sol.problem();
        let fan = sol
            .waves()
            .iter()
            .find(|w| w.kind == WaveKind::Fan)
            .copied()
            .expect("a fan");
        let pa = fan.phi_above;
        let v0 = f(p.phi0) / p.phi0;
        let rhs = |q: f64| fpp(q) / (f(q) / q - fp(q));
        let mut ln_t = (p.height / (v0 - fp(pa))).ln();
        let steps = 4000;
        let dp = (phi_end - pa) / steps as f64;
        let (mut dev_h, mut dev_phi) = (0.0f64, 0.0f64);
        for k in 0..steps {
            let q = pa + k as f64 * dp;
            let (k1, k2, k4) = (rhs(q), rhs(q + 0.5 * dp), rhs(q + dp));
            ln_t += dp * (k1 + 4.0 * k2 + k4) / 6.0;
            if (k + 1) % 100 == 0 && k + 1 < steps {
                let (q, t) = (q + dp, ln_t.exp());
                let z = -fp(q) * t;
                dev_h = dev_h.max((sol.interface_height(t) / z - 1.0).abs());
                dev_phi = dev_phi.max((sol.interface_concentration(t) / q - 1.0).abs());
            }
        }
        (dev_h, dev_phi, ln_t.exp())
    }

    #[test]
    fn fan_phase_matches_rk4_integration_of_the_fan_ode() {
        // The solver uses the first integral t (f − φ f') = φ0 H of this ODE;
        // the RK4 integration is independent of it. Measured deviations are
        // below 1e-13.
        for phi0 in [0.30, 0.40] {
            let sol = rz_case(phi0);
            let pb = sol
                .waves()
                .iter()
                .find(|w| w.kind == WaveKind::Fan)
                .expect("fan")
                .phi_below;
            let (dh, dphi, t_end) = fan_ode_deviation(&sol, &rz, &rz_prime, &rz_second, pb);
            assert!(
                dh < 1e-10,
                "RZ φ0 = {phi0}: interface height deviates by {dh:e}"
            );
            assert!(
                dphi < 1e-10,
                "RZ φ0 = {phi0}: interface state deviates by {dphi:e}"
            );
            // The ODE reaches φb when the interface meets the sediment.
            assert_rel(t_end, sol.final_time(), 1e-10, "tf from the fan ODE");
        }
        // Power law, fan up to φmax: follow it to φ = 0.63.
        let pl_prime = |q: f64| {
            let g = 1.0 - q / PHI_MAX;
            V_INF * g.powf(N_RZ - 1.0) * (1.0 - (N_RZ + 1.0) * q / PHI_MAX)
        };
        // f'' = v∞ (n/φmax) g^(n−2) ((n+1) φ/φmax − 2), differentiating f' above.
        let pl_second = |q: f64| {
            let g = 1.0 - q / PHI_MAX;
            V_INF * N_RZ / PHI_MAX * g.powf(N_RZ - 2.0) * ((N_RZ + 1.0) * q / PHI_MAX - 2.0)
        };
        for q in [0.1, 0.3, 0.5, 0.6] {
            assert!((pl_prime(q) - fd(&power_law, q)).abs() < 1e-9 * V_INF);
            assert!((pl_second(q) - fd(&pl_prime, q)).abs() < 1e-7 * V_INF);
        }
        let sol = power_law_case(0.10);
        let (dh, dphi, _) = fan_ode_deviation(&sol, &power_law, &pl_prime, &pl_second, 0.63);
        assert!(
            dh < 1e-10 && dphi < 1e-10,
            "power law: deviations {dh:e}, {dphi:e}"
        );
    }

    #[test]
    fn kynch_construction_recovers_the_flux_from_the_settling_curve() {
        // physics.md §5.2 item 5: the tangent to h(t) has intercept h_I, and
        // φ = φ0 H/h_I is the concentration below the interface, whose
        // settling velocity is v(φ) = −h'(t). Differentiate the settling
        // curve numerically (central differences, step 1e-5 of the fan phase)
        // and check both statements against the independent RZ law.
        for phi0 in [0.30, 0.40] {
            let sol = rz_case(phi0);
            let (t1, tf) = (sol.first_critical_time(), sol.final_time());
            for k in 1..10 {
                let t = t1 + (tf - t1) * k as f64 / 10.0;
                let d = 1e-5 * (tf - t1);
                let slope = (sol.interface_height(t + d) - sol.interface_height(t - d)) / (2.0 * d);
                let h_i = sol.interface_height(t) - t * slope;
                let phi = sol.interface_concentration(t);
                assert_rel(
                    phi0 * H / h_i,
                    phi,
                    1e-8,
                    &format!("φ0 H/h_I at t = {t:.0} s"),
                );
                assert_rel(
                    -slope,
                    rz(phi) / phi,
                    1e-8,
                    &format!("−h' = v(φ) at t = {t:.0} s"),
                );
            }
            // Before t1 the intercept is H, so φ = φ0.
            let t = 0.5 * t1;
            let slope = (sol.interface_height(t + 1.0) - sol.interface_height(t - 1.0)) / 2.0;
            assert_rel(
                sol.interface_height(t) - t * slope,
                H,
                1e-12,
                "h_I = H before t1",
            );
        }
    }

    /// Largest |h_Godunov − h_exact| over output times `t ≤ t_max`.
    fn godunov_curve_error(
        sol: &KynchSolution,
        f: &dyn Fn(f64) -> f64,
        cells: usize,
        times: &[f64],
    ) -> (f64, Vec<Vec<f64>>) {
        let p = sol.problem();
        let extrema = local_extrema(f);
        let prof = godunov_column(f, &extrema, p.phi0, p.height, cells, 1.1 * V_INF, times);
        let err = times
            .iter()
            .zip(&prof)
            .map(|(&t, phi)| (fv_interface(phi, p.height) - sol.interface_height(t)).abs())
            .fold(0.0, f64::max);
        (err, prof)
    }

    #[test]
    fn settling_curve_agrees_with_godunov_richardson_zaki() {
        // Independent check: explicit Godunov finite volumes (physics.md §8.1)
        // on 2000 cells (Δx = 0.5 mm), the interface read as the half-height
        // crossing of the 0 → φ jump. Compared up to 0.98 tf: after that the
        // scheme's sediment is denser than φmax (see `godunov_column`), which
        // offsets its final height by ~1e-3 H whatever the grid.
        let sol = rz_case(0.30);
        let (t1, tf) = (sol.first_critical_time(), sol.final_time());
        let times: Vec<f64> = (1..=49).map(|k| 0.98 * tf * k as f64 / 49.0).collect();
        assert!(
            times.iter().filter(|&&t| t > t1).count() >= 10,
            "fan phase sampled"
        );
        let (err_fine, _) = godunov_curve_error(&sol, &rz, 2000, &times);
        let (err_coarse, _) = godunov_curve_error(&sol, &rz, 500, &times);
        // Tolerance 5 Δx = 2.5 mm; measured 1.9 mm (first-order smearing of
        // the fan corner). The fan phase departs from a straight continuation
        // of the settling line by 3.4 cm, over 10 times this tolerance.
        assert!(
            err_fine <= 2.5e-3,
            "Godunov vs exact (2000 cells): {err_fine:.3e} m"
        );
        // And the discrepancy shrinks under refinement (measured ratio 0.39).
        assert!(
            err_fine <= 0.6 * err_coarse,
            "no convergence: {err_coarse:.3e} → {err_fine:.3e}"
        );
        let va = sol.interface_velocity(t1 * (1.0 + 1e-9));
        let straight = sol.interface_height(t1) - va * (tf - t1);
        assert!(
            sol.final_height() - straight > 10.0 * 2.5e-3,
            "test discriminates the fan"
        );

        // Loading above the inflection (fan–shock), 1000 cells: tolerance 4 Δx,
        // measured 1.5 mm.
        let sol = rz_case(0.40);
        let tf = sol.final_time();
        let times: Vec<f64> = (1..=40).map(|k| 0.98 * tf * k as f64 / 40.0).collect();
        let (err, _) = godunov_curve_error(&sol, &rz, 1000, &times);
        assert!(
            err <= 4e-3,
            "Godunov vs exact, fan-shock (1000 cells): {err:.3e} m"
        );
    }

    #[test]
    fn power_law_flux_fan_reaches_packing_only_asymptotically() {
        // f = v∞ φ (1 − φ/φmax)^n vanishes continuously at φmax with
        // f'(φmax) = 0, so the fan reaches φmax and the final height is only
        // approached as t → ∞ (physics.md §5.2 item 4).
        let sol = power_law_case(0.10);
        assert_eq!(sol.structure(), Structure::ShockFan, "{sol:?}");
        check_waves(&sol, &power_law, "power law");
        assert_eq!(sol.final_time(), f64::INFINITY);
        assert_eq!(sol.sediment_rise_speed(), 0.0);
        assert_eq!(sol.bed_height(1e6), 0.0);
        let hf = sol.final_height();
        let t1 = sol.first_critical_time();
        let mut prev = H;
        for k in 0..8 {
            let t = t1 * 4f64.powi(k);
            let h = sol.interface_height(t);
            assert!(h < prev && h > hf, "monotone approach to hf at {t}: {h}");
            prev = h;
        }
        // Slow approach: still 1.9 % above hf after 4^7 t1 ≈ 2.7e7 s.
        assert!(
            prev - hf < 0.03 * hf,
            "close to hf after 4^7 t1: {prev} vs {hf}"
        );

        // Godunov (physics.md §8.1) converges here up to the sediment, since
        // the flux has no jump: settling curve and L1 profile at 1000 cells.
        let times: Vec<f64> = (1..=30).map(|k| 4.0 * t1 * k as f64 / 30.0).collect();
        let (err, prof) = godunov_curve_error(&sol, &power_law, 1000, &times);
        // Tolerance 4 Δx; measured 1.6 mm.
        assert!(err <= 4e-3, "Godunov vs exact settling curve: {err:.3e} m");
        for k in [9, 19, 29] {
            let t = times[k];
            let dx = H / 1000.0;
            let l1: f64 = prof[k]
                .iter()
                .enumerate()
                .map(|(j, &p)| (p - sol.profile(H - (j as f64 + 0.5) * dx, t)).abs() * dx)
                .sum();
            // Relative to the inventory φ0 H; tolerance 1.5 %, measured
            // 0.33–0.85 % at the three times.
            assert!(
                l1 <= 0.015 * 0.10 * H,
                "L1 profile error at t = {t:.0} s: {l1:.3e}"
            );
        }
    }

    #[test]
    fn general_flux_with_two_fans() {
        // The stepped flux has two concave→convex turns in (φ0, φmax): the
        // envelope is shock, fan, bitangent shock, fan, sediment shock.
        let sol = stepped_case();
        assert_eq!(sol.structure(), Structure::Composite, "{sol:?}");
        let kinds: Vec<WaveKind> = sol.waves().iter().map(|w| w.kind).collect();
        use WaveKind::{Fan, Shock};
        assert_eq!(kinds, vec![Shock, Fan, Shock, Fan, Shock]);
        check_waves(&sol, &stepped, "stepped");
        // Interface admissibility: v = f/φ decreases on (0, φmax).
        for i in 1..640 {
            let (a, b) = (i as f64 * 1e-3, (i + 1) as f64 * 1e-3);
            assert!(stepped(b) / b <= stepped(a) / a, "v increases at {a}");
        }
        assert_eq!(sol.critical_times().len(), 3);
        // Godunov comparison (1000 cells, tolerance 4 Δx, measured 2.3 mm;
        // 7.0 mm at 250 cells).
        let tf = sol.final_time();
        let times: Vec<f64> = (1..=40).map(|k| 0.98 * tf * k as f64 / 40.0).collect();
        let (err, _) = godunov_curve_error(&sol, &stepped, 1000, &times);
        assert!(err <= 4e-3, "Godunov vs exact, stepped flux: {err:.3e} m");
    }

    #[test]
    fn fan_profile_is_the_inverse_of_the_characteristic_speed() {
        // Inside a centred fan from the floor corner, z = −f'(φ) t
        // (physics.md §5.1): check the profile against the independent f'.
        let sol = rz_case(0.30);
        let fan = sol.waves()[1];
        let t = 0.8 * sol.first_critical_time();
        for k in 1..10 {
            let z = t
                * (fan.rise_speed_lower
                    + (fan.rise_speed_upper - fan.rise_speed_lower) * k as f64 / 10.0);
            let phi = sol.profile(z, t);
            assert!(fan.phi_above < phi && phi < fan.phi_below);
            assert_rel(-rz_prime(phi) * t, z, 1e-10, "z = −f'(φ) t");
        }
    }

    #[test]
    fn refuses_bad_or_unsupported_problems() {
        let rzf = RichardsonZaki::new(V_INF, N_RZ);
        let p = |phi0: f64, height: f64| BatchProblem {
            phi0,
            height,
            phi_max: PHI_MAX,
        };
        for (phi0, height) in [
            (0.0, 1.0),
            (0.64, 1.0),
            (0.7, 1.0),
            (0.2, 0.0),
            (f64::NAN, 1.0),
        ] {
            let r = KynchSolution::new(rzf, p(phi0, height));
            assert!(
                matches!(r, Err(KynchError::InvalidInput(_))),
                "{phi0}, {height}: {r:?}"
            );
        }
        // f(0) ≠ 0.
        let r = KynchSolution::new(FnFlux(|q: f64| 1e-4 + rz(q)), p(0.2, 1.0));
        assert!(matches!(r, Err(KynchError::InvalidInput(_))), "{r:?}");
        // v = f/φ increasing near 0 (f = φ²(1−φ)³): the chord from the
        // origin to φ0 lies above f, the interface would be a fan.
        let r = KynchSolution::new(
            FnFlux(|q: f64| V_INF * q * q * (1.0 - q).powi(3)),
            p(0.2, 1.0),
        );
        assert!(matches!(r, Err(KynchError::Unsupported(_))), "{r:?}");
    }

    #[test]
    fn structure_changes_where_the_sediment_chord_touches_f() {
        // The tangent from (φmax, 0) touches f at φb: f'(φb)(φmax − φb) + f(φb)
        // = 0 (physics.md §5.2 item 2), found here by bisection with the
        // independent f'. The sediment is a single shock exactly while the
        // chord from (φ0, f(φ0)) is no steeper than that tangent, i.e. up to
        // the φ0* with f(φ0*) = −f'(φb)(φmax − φ0*).
        let root = |g: &dyn Fn(f64) -> f64, mut a: f64, mut b: f64| {
            for _ in 0..200 {
                let m = 0.5 * (a + b);
                if g(a) * g(m) <= 0.0 { b = m } else { a = m }
            }
            0.5 * (a + b)
        };
        let pb = root(&|q| rz_prime(q) * (PHI_MAX - q) + rz(q), 0.4, 0.63);
        let s = -rz_prime(pb);
        let phi_star = root(&|q| rz(q) - s * (PHI_MAX - q), 0.05, 0.3);
        // 0.146652: the same two bisections done separately in Python 3
        // (plain floats) while writing this test.
        assert!((phi_star - 0.146652).abs() < 1e-6, "φ0* = {phi_star}");
        let below = rz_case(phi_star * (1.0 - 1e-5));
        let above = rz_case(phi_star * (1.0 + 1e-5));
        assert_eq!(below.structure(), Structure::ShockOnly, "{below:?}");
        // Above φ0* the fan is narrower than the envelope grid (1e-5 in φ)
        // and is still resolved.
        assert_eq!(above.structure(), Structure::ShockFanShock, "{above:?}");
        assert_rel(above.waves()[1].phi_below, pb, 1e-12, "φb");
        // The settling curve changes continuously across the switch.
        assert_rel(
            below.final_time(),
            above.final_time(),
            1e-4,
            "tf across φ0*",
        );
    }
}
