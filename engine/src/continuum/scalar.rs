//! One size class: Kynch's scalar conservation law, optionally with the
//! degenerate diffusion of a compressible bed, by explicit Godunov finite
//! volumes (MUSCL by default, see [`Reconstruction`]) with a conservative
//! packing cap.
//!
//! Cells are numbered from the floor up; interface `k` (k = 0..=N) lies at
//! height `k Δz`, between cell `k − 1` below and cell `k` above. Fluxes are
//! solids volume fluxes, positive **downward** (physics.md §5.1), so cell `j`
//! gains `F_{j+1}` from above and loses `F_j` below:
//!
//! ```text
//! φ_j ← φ_j + (Δt/Δz) (F_{j+1} − F_j),      F_0 = F_N = 0 (closed floor and top).
//! ```
//!
//! Every change of a cell is a flux that another cell loses, so the solids
//! inventory is kept to rounding whatever the fluxes are.
//!
//! # One stage
//!
//! 1. Godunov flux at every interior interface between the bottom face of
//!    the cell above and the top face of the cell below, minus the diffusive
//!    flux `(A(φ_below) − A(φ_above))/Δz` (cell averages) when the bed is
//!    compressible.
//! 2. **Packing cap**, from the floor up: the flux into cell `c` from above
//!    may not exceed the room left in it plus what leaves it below,
//!    `(φmax − φ_c) Δz/Δt + F_c`, where `F_c` is already final. The truncated
//!    flux jumps from `f(φmax⁻) > 0` to 0 at φmax (Richardson–Zaki,
//!    Vesilind), i.e. it has no finite Lipschitz constant there, and plain
//!    Godunov lets a cell just below φmax take `Δt f/Δz` more than it has
//!    room for (the sediment then overshoots φmax and the final height is off
//!    by an amount that does not shrink with the grid). The cap only lowers
//!    fluxes, keeps solids back in the cell above, and keeps the telescoping
//!    sum, so the stage stays conservative; a cell it fills is set to φmax,
//!    its value in exact arithmetic (a change of an ulp), and the rest of the
//!    arriving solids pile up above it, which is how the sediment surface
//!    rises.
//! 3. Update; values within rounding outside `[0, φmax]` are put back on the
//!    bound (a change of a few ulps).
//!
//! Positivity: with `Δt (m L/Δz + 2 max a/Δz²) ≤ 1` (`m` = 2 for linear
//! faces), each stage is a monotone Godunov step on face values that lie
//! between neighbouring averages, plus a monotone three-point diffusion step
//! in `A`, which share that bound. The cap lowers the flux out of the cell
//! above (which only raises it) and leaves the cell below exactly at φmax.

use crate::physics::compression::{self, IntegratedDiffusion, PowerLawStress};

/// Bulk flow and feed of a continuous thickener for the next step (the
/// Bürger–Diehl zones of [`crate::operation`]): the feed cell takes the
/// source; the interfaces at and below its bottom face carry the bulk flux
/// `q_u φ` of the upper state (downward), those at and above its top face
/// `−q_e φ` of the lower state (upward); the floor passes `q_u φ_0` out
/// (underflow) and the top `q_e φ_{N−1}` (overflow). Settling and
/// compression act only across interior interfaces, i.e. inside the vessel.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Bulk {
    /// Index of the cell that holds the feed level.
    pub feed_cell: usize,
    /// q_u = Q_u/A, m/s (downward below the feed).
    pub underflow_velocity: f64,
    /// q_e = Q_e/A, m/s (upward above the feed, a positive number).
    pub overflow_velocity: f64,
    /// Feed source in the feed cell, volume fraction per second
    /// (`Q_f φ_f s_i /(A Δz)`, for the class this solver carries).
    pub source: f64,
}

/// Solids volume per unit area that crossed the boundaries, accumulated
/// over steps (m): in with the feed, out at the floor and over the top.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Crossed {
    pub fed: f64,
    pub underflow: f64,
    pub overflow: f64,
}
use crate::physics::hindered::HinderedLaw;

/// Points of the grid on `[0, φmax)` used to find the local extrema of `f`
/// and its Lipschitz constant.
const SCAN_POINTS: usize = 8192;
/// Safety factor on the Lipschitz constant found from chord slopes on the
/// scan grid (a chord underestimates the steepest slope by O(h f'')).
const LIPSCHITZ_MARGIN: f64 = 1.01;
/// Nodes of the table of A(φ) (compression).
const DIFFUSION_TABLE: usize = 4096;

/// The batch flux `f(φ) = φ v(φ)` of one class, with what the Godunov flux
/// needs: its interior local extrema on `(0, φmax)` and a bound on `|f'|`.
#[derive(Debug, Clone)]
pub struct ScalarFlux {
    law: HinderedLaw,
    v_terminal: f64,
    phi_max: f64,
    /// Local maxima `(φ, f(φ))` strictly inside `(0, φmax)`.
    maxima: Vec<(f64, f64)>,
    /// Local minima `(φ, f(φ))` strictly inside `(0, φmax)`.
    minima: Vec<(f64, f64)>,
    /// `max |f'|` on `[0, φmax)`, m/s (the jump to 0 at φmax excluded: the
    /// packing cap deals with it).
    lipschitz: f64,
}

impl ScalarFlux {
    /// Scan the law once: `f` on a grid of [`SCAN_POINTS`] points of
    /// `[0, φmax)`, each interior local extremum refined by golden-section
    /// search, and the steepest chord slope (times [`LIPSCHITZ_MARGIN`]).
    pub fn new(law: HinderedLaw, v_terminal: f64, phi_max: f64) -> Self {
        let mut s = ScalarFlux {
            law,
            v_terminal,
            phi_max,
            maxima: Vec::new(),
            minima: Vec::new(),
            lipschitz: 0.0,
        };
        let m = SCAN_POINTS;
        let xs: Vec<f64> = (0..m).map(|i| phi_max * i as f64 / m as f64).collect();
        let ys: Vec<f64> = xs.iter().map(|&x| s.flux(x)).collect();
        let mut slope: f64 = 0.0;
        for i in 0..m - 1 {
            slope = slope.max(((ys[i + 1] - ys[i]) / (xs[i + 1] - xs[i])).abs());
        }
        s.lipschitz = LIPSCHITZ_MARGIN * slope;
        // Interior extrema: where the discrete slope changes sign (a flat
        // run counts once, at its first point).
        let sign = |d: f64| {
            if d > 0.0 {
                1
            } else if d < 0.0 {
                -1
            } else {
                0
            }
        };
        let mut last = sign(ys[1] - ys[0]);
        for i in 1..m - 1 {
            let next = sign(ys[i + 1] - ys[i]);
            if next == 0 {
                continue;
            }
            if last > 0 && next < 0 {
                let p = s.golden(xs[i - 1], xs[i + 1], true);
                let v = s.flux(p).max(ys[i]);
                s.maxima.push((p, v));
            } else if last < 0 && next > 0 {
                let p = s.golden(xs[i - 1], xs[i + 1], false);
                let v = s.flux(p).min(ys[i]);
                s.minima.push((p, v));
            }
            last = next;
        }
        // A flux still rising at the last grid point has its supremum on
        // [·, φmax) just below φmax (the truncated law is 0 at φmax itself).
        if last > 0 {
            let p = xs[m - 1] + 0.999_999 * (phi_max - xs[m - 1]);
            s.maxima.push((p, s.flux(p).max(ys[m - 1])));
        }
        s
    }

    /// `f(φ)` in m/s: the engine's hindered law, zero at and above φmax.
    #[inline]
    pub fn flux(&self, phi: f64) -> f64 {
        self.law.batch_flux(self.v_terminal, phi, self.phi_max)
    }

    /// Bound on `|f'|` over `[0, φmax)`, m/s.
    pub fn lipschitz(&self) -> f64 {
        self.lipschitz
    }

    /// Interior local maxima `(φ, f)` found by the scan.
    pub fn maxima(&self) -> &[(f64, f64)] {
        &self.maxima
    }

    /// Interior local minima `(φ, f)` found by the scan.
    pub fn minima(&self) -> &[(f64, f64)] {
        &self.minima
    }

    /// Golden-section search for the maximum (or minimum) of `f` on `[a, b]`.
    fn golden(&self, mut a: f64, mut b: f64, maximum: bool) -> f64 {
        let r = 0.5 * (5f64.sqrt() - 1.0);
        let score = |x: f64| if maximum { self.flux(x) } else { -self.flux(x) };
        let mut c = b - r * (b - a);
        let mut d = a + r * (b - a);
        let (mut fc, mut fd) = (score(c), score(d));
        for _ in 0..200 {
            if b - a <= 1e-15 * self.phi_max {
                break;
            }
            if fc >= fd {
                b = d;
                d = c;
                fd = fc;
                c = b - r * (b - a);
                fc = score(c);
            } else {
                a = c;
                c = d;
                fc = fd;
                d = a + r * (b - a);
                fd = score(d);
            }
        }
        0.5 * (a + b)
    }

    /// Godunov flux between the cell above (`upper`, with `f_upper = f(upper)`)
    /// and the cell below (`lower`, `f_lower`), physics.md §8.1: the minimum of
    /// `f` on `[upper, lower]` when `upper ≤ lower`, the maximum on
    /// `[lower, upper]` otherwise. Exact: the extremum over an interval is at
    /// an end or at an interior local extremum of `f`.
    #[inline]
    pub fn godunov(&self, upper: f64, lower: f64, f_upper: f64, f_lower: f64) -> f64 {
        if upper <= lower {
            let mut m = f_upper.min(f_lower);
            for &(p, v) in &self.minima {
                if p > upper && p < lower {
                    m = m.min(v);
                }
            }
            m
        } else {
            let mut m = f_upper.max(f_lower);
            for &(p, v) in &self.maxima {
                if p > lower && p < upper {
                    m = m.max(v);
                }
            }
            m
        }
    }
}

/// Degenerate diffusion of a compressible bed, `∂²A(φ)/∂x²` (physics.md §6.1,
/// §8.3), with `A` tabulated once by quadrature.
#[derive(Debug, Clone)]
pub struct BedDiffusion {
    table: IntegratedDiffusion,
    /// `max a` on `[0, φ_i+1]` for each table node `i`, m²/s: the steepest
    /// slope of the table's linear interpolant up to there, which is what
    /// the explicit scheme sees.
    max_below: Vec<f64>,
    /// Gel point φc: above it the network carries stress.
    gel_point: f64,
}

impl BedDiffusion {
    /// `a(φ) = v_hs(φ) σe′(φ)/(Δρ g)` from the class's hindered law and the
    /// power-law stress, integrated into `A(φ)`.
    pub fn new(
        law: HinderedLaw,
        v_terminal: f64,
        phi_max: f64,
        stress: PowerLawStress,
        density_excess: f64,
        g: f64,
    ) -> Self {
        let a = |phi: f64| {
            compression::diffusion(
                law.velocity(v_terminal, phi, phi_max),
                stress.stress_derivative(phi),
                density_excess,
                g,
            )
        };
        // The kink of A at the gel point falls inside one table cell, where
        // the interpolation is first-order (an error of order a(φc⁺) φmax/n).
        let n = DIFFUSION_TABLE;
        let table = IntegratedDiffusion::tabulate(a, phi_max, n);
        let step = phi_max / n as f64;
        let mut running: f64 = 0.0;
        let max_below = table
            .values()
            .windows(2)
            .map(|w| {
                running = running.max((w[1] - w[0]) / step);
                running
            })
            .collect();
        BedDiffusion {
            table,
            max_below,
            gel_point: stress.gel_point,
        }
    }

    /// `A(φ)`, m²/s.
    #[inline]
    pub fn integrated(&self, phi: f64) -> f64 {
        self.table.value(phi)
    }

    /// Bound on `a = A'` over `[0, φ]`, m²/s (the interpolant's slopes in
    /// every table cell that reaches below φ).
    pub fn max_coefficient_below(&self, phi: f64) -> f64 {
        let n = self.max_below.len();
        let x = phi / self.table.phi_max() * n as f64;
        let i = (x.max(0.0).floor() as usize).min(n - 1);
        self.max_below[i]
    }

    pub fn gel_point(&self) -> f64 {
        self.gel_point
    }
}

/// How cell values are extended to the cell faces before the Godunov flux.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Reconstruction {
    /// Face values are the cell averages: first-order Godunov with forward
    /// Euler steps (`Δt L/Δz ≤ C`).
    PiecewiseConstant,
    /// MUSCL: linear in each cell with the minmod slope `minmod(Δ₋, Δ₊)`
    /// (zero in the two wall cells), the Godunov flux of the face values, and
    /// SSP-RK2 (Heun) steps with `Δt 2L/Δz ≤ C` per stage. Face values stay
    /// between the neighbouring averages, so each stage keeps `0 ≤ φ` by the
    /// usual half-cell argument and `φ ≤ φmax` by the packing cap. Second
    /// order where the solution is smooth, and far less smearing than first
    /// order of the contact discontinuity at the top of a sediment fed by a
    /// fan (first order smears it as √(t Δz)).
    ///
    /// Minmod, not a steeper limiter: with the monotonized-central slope the
    /// cell filling at the top of the sediment reconstructs its upper face
    /// near the suspension above, keeps taking in that suspension's flux
    /// until the cap fills it, and the sediment becomes a non-entropic shock
    /// straight from the suspension to φmax that rises too fast — measured
    /// for φ0 = 0.3, a bed 4 mm too high on 800 cells and 7 mm on 1600, i.e.
    /// no convergence. (The flux is not convex, where compressive limiters
    /// are known to select wrong weak solutions.) With minmod the bed error
    /// falls as Δz.
    #[default]
    LimitedLinear,
}

/// The state and work buffers of the scalar solver.
#[derive(Debug, Clone)]
pub struct ScalarSolver {
    pub flux: ScalarFlux,
    pub diffusion: Option<BedDiffusion>,
    pub reconstruction: Reconstruction,
    pub phi_max: f64,
    /// Cell height Δz, m.
    pub dz: f64,
    /// Volume fraction of each cell, from the floor up.
    pub phi: Vec<f64>,
    /// Interface fluxes (N + 1), m/s, positive downward.
    fluxes: Vec<f64>,
    /// Face values (bottom and top face of each cell) and their fluxes.
    bottom: Vec<f64>,
    top: Vec<f64>,
    f_bottom: Vec<f64>,
    f_top: Vec<f64>,
    /// A(φ_j) per cell (compression).
    cell_a: Vec<f64>,
    /// Cells the packing cap filled in this stage.
    filled: Vec<bool>,
    stage: Vec<f64>,
    stage2: Vec<f64>,
    /// Interfaces whose flux the packing cap lowered, over the run.
    pub capped: u64,
    /// Bulk flow and feed (continuous thickener), None for a closed column.
    pub bulk: Option<Bulk>,
    /// What crossed the boundaries since the last [`take_crossed`](Self::take_crossed).
    crossed: Crossed,
}

impl ScalarSolver {
    pub fn new(
        flux: ScalarFlux,
        diffusion: Option<BedDiffusion>,
        reconstruction: Reconstruction,
        phi_max: f64,
        height: f64,
        cells: usize,
        phi0: f64,
    ) -> Self {
        ScalarSolver {
            flux,
            diffusion,
            reconstruction,
            phi_max,
            dz: height / cells as f64,
            phi: vec![phi0; cells],
            fluxes: vec![0.0; cells + 1],
            bottom: vec![0.0; cells],
            top: vec![0.0; cells],
            f_bottom: vec![0.0; cells],
            f_top: vec![0.0; cells],
            cell_a: vec![0.0; cells],
            filled: vec![false; cells],
            stage: vec![0.0; cells],
            stage2: vec![0.0; cells],
            capped: 0,
            bulk: None,
            crossed: Crossed::default(),
        }
    }

    /// The boundary crossings accumulated since the last call (and reset).
    pub fn take_crossed(&mut self) -> Crossed {
        std::mem::take(&mut self.crossed)
    }

    /// Largest stable step for Courant number `courant`:
    /// `Δt (m L/Δz + 2 max a/Δz²) = courant` (physics.md §8.3–8.4), with
    /// `m = 1` for piecewise-constant and `m = 2` for limited-linear faces.
    /// `L` bounds `|f'|` over the whole range `[0, φmax)`: the walls act as the
    /// states 0 (above) and φmax (below), so that whole range is in play from
    /// the first step. `max a` is taken over `[0, max_j φ_j + 0.1 φmax]`:
    /// the values the diffusion term sees (A is evaluated at cell averages
    /// only), with room for the densest cell to grow within the step.
    pub fn stable_step(&self, courant: f64) -> f64 {
        let d = self.diffusion.as_ref().map_or(0.0, |d| {
            let top = self.phi.iter().fold(0.0f64, |m, &p| m.max(p));
            d.max_coefficient_below(top + 0.1 * self.phi_max)
        });
        let m = match self.reconstruction {
            Reconstruction::PiecewiseConstant => 1.0,
            Reconstruction::LimitedLinear => 2.0,
        };
        let q = self
            .bulk
            .map_or(0.0, |b| b.underflow_velocity.max(b.overflow_velocity));
        let rate = m * (self.flux.lipschitz() + q) / self.dz + 2.0 * d / (self.dz * self.dz);
        if rate > 0.0 {
            courant / rate
        } else {
            f64::INFINITY
        }
    }

    /// One step of length `dt` (forward Euler, or SSP-RK2 for
    /// [`Reconstruction::LimitedLinear`]).
    pub fn step(&mut self, dt: f64) {
        let state = std::mem::take(&mut self.phi);
        let mut stage = std::mem::take(&mut self.stage);
        match self.reconstruction {
            Reconstruction::PiecewiseConstant => {
                self.euler(&state, dt, &mut stage, 1.0);
                self.phi = stage;
                self.stage = state;
            }
            Reconstruction::LimitedLinear => {
                let mut stage2 = std::mem::take(&mut self.stage2);
                self.euler(&state, dt, &mut stage, 0.5);
                self.euler(&stage, dt, &mut stage2, 0.5);
                let mut next = state;
                for (v, s) in next.iter_mut().zip(&stage2) {
                    *v = guard_rounding(0.5 * (*v + s), self.phi_max);
                }
                self.phi = next;
                self.stage = stage;
                self.stage2 = stage2;
            }
        }
    }

    /// Face values of `state` (module docs of [`Reconstruction`]).
    fn reconstruct(&mut self, state: &[f64]) {
        let n = state.len();
        self.bottom.copy_from_slice(state);
        self.top.copy_from_slice(state);
        if self.reconstruction == Reconstruction::LimitedLinear {
            for j in 1..n - 1 {
                let (below, c, above) = (state[j - 1], state[j], state[j + 1]);
                let slope = minmod(c - below, above - c);
                // Between the neighbours by construction; the clamp only
                // absorbs rounding.
                self.bottom[j] = (c - 0.5 * slope).clamp(0.0, self.phi_max);
                self.top[j] = (c + 0.5 * slope).clamp(0.0, self.phi_max);
            }
        }
        for j in 0..n {
            self.f_bottom[j] = self.flux.flux(self.bottom[j]);
            self.f_top[j] = self.flux.flux(self.top[j]);
        }
    }

    /// One forward-Euler stage `out = state + Δt L(state)` (module docs);
    /// `weight` is the stage's share in the step (1 for Euler, ½ for each
    /// SSP-RK2 stage), for the boundary bookkeeping.
    fn euler(&mut self, state: &[f64], dt: f64, out: &mut [f64], weight: f64) {
        let n = state.len();
        self.reconstruct(state);
        if let Some(d) = &self.diffusion {
            for (a, &phi) in self.cell_a.iter_mut().zip(state) {
                *a = d.integrated(phi);
            }
        }
        let lambda = dt / self.dz;
        let (feed_cell, q_u, q_e, source) = match self.bulk {
            Some(b) => (
                b.feed_cell,
                b.underflow_velocity,
                b.overflow_velocity,
                b.source,
            ),
            None => (usize::MAX, 0.0, 0.0, 0.0),
        };
        // Outlets: only the bulk flow crosses them (upwind: the cell inside).
        self.fluxes[0] = q_u * state[0];
        self.fluxes[n] = -q_e * state[n - 1];
        for k in 1..n {
            let (up, lo) = (k, k - 1);
            let mut f = self.flux.godunov(
                self.bottom[up],
                self.top[lo],
                self.f_bottom[up],
                self.f_top[lo],
            );
            if self.diffusion.is_some() {
                // Depth x points down: −∂A/∂x = (A_above − A_below)/Δz.
                f += (self.cell_a[up] - self.cell_a[lo]) / self.dz;
            }
            // Bulk flux, upwind: down below the feed cell, up above it.
            if k <= feed_cell {
                f += q_u * self.bottom[up];
            } else {
                f -= q_e * self.top[lo];
            }
            let fed = if lo == feed_cell {
                source * self.dz
            } else {
                0.0
            };
            let room = (self.phi_max - state[lo]) / lambda - fed + self.fluxes[lo];
            self.filled[lo] = f >= room;
            if f > room {
                f = room;
                self.capped += 1;
            }
            self.fluxes[k] = f;
        }
        self.filled[n - 1] = false;
        for j in 0..n {
            out[j] = if self.filled[j] {
                // φ_j + λ(room − F_j) + Δt s = φmax in exact arithmetic.
                self.phi_max
            } else {
                let mut v = state[j] + lambda * (self.fluxes[j + 1] - self.fluxes[j]);
                if j == feed_cell {
                    v += dt * source;
                }
                guard_rounding(v, self.phi_max)
            };
        }
        if self.bulk.is_some() {
            self.crossed.fed += weight * dt * source * self.dz;
            self.crossed.underflow += weight * dt * self.fluxes[0];
            self.crossed.overflow -= weight * dt * self.fluxes[n];
        }
    }
}

/// minmod(a, b): the smaller slope when both have the same sign, else 0.
#[inline]
pub(crate) fn minmod(a: f64, b: f64) -> f64 {
    if a > 0.0 && b > 0.0 {
        a.min(b)
    } else if a < 0.0 && b < 0.0 {
        a.max(b)
    } else {
        0.0
    }
}

/// Put a value that left `[0, φmax]` by rounding only back on the bound.
/// A larger excursion is left alone (it would be a scheme error, and the
/// tests would see it).
#[inline]
pub(crate) fn guard_rounding(v: f64, phi_max: f64) -> f64 {
    const SLACK: f64 = 1e-12;
    if v > phi_max && v <= phi_max * (1.0 + SLACK) {
        phi_max
    } else if v < 0.0 && v >= -SLACK * phi_max {
        0.0
    } else {
        v
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const N_RZ: f64 = 4.65;

    fn rz() -> ScalarFlux {
        ScalarFlux::new(HinderedLaw::RichardsonZaki { n: N_RZ }, 1e-3, 0.64)
    }

    #[test]
    fn richardson_zaki_maximum_and_slope() {
        // physics.md §9 #21: argmax 1/(n+1) = 0.176991, f_max/v∞ = 0.0715455.
        let s = rz();
        assert_eq!(s.maxima().len(), 1);
        assert!(s.minima().is_empty());
        let (p, v) = s.maxima()[0];
        assert!((p - 1.0 / (N_RZ + 1.0)).abs() < 1e-7, "argmax {p}");
        assert!((v / 1e-3 - 0.0715455).abs() < 1e-7, "f_max {v}");
        // max |f'| on [0, φmax) is f'(0) = v∞ (physics.md §8.4): the bound is
        // within the 1 % margin above it.
        assert!(s.lipschitz() >= 1e-3 && s.lipschitz() <= 1.0101e-3);
    }

    #[test]
    fn godunov_matches_the_unimodal_formula() {
        // physics.md §8.1, unimodal case with φ* = 1/(n+1):
        // u ≤ v: min(f(u), f(v)); v ≤ φ* ≤ u: f(φ*); otherwise max(f(u), f(v)).
        let s = rz();
        let f = |q: f64| 1e-3 * q * (1.0 - q).powf(N_RZ) * if q < 0.64 { 1.0 } else { 0.0 };
        let star = 1.0 / (N_RZ + 1.0);
        let pts = [0.0, 0.05, 0.15, 0.17699, 0.2, 0.35, 0.5, 0.639, 0.64];
        for &u in &pts {
            for &v in &pts {
                let expect = if u <= v {
                    f(u).min(f(v))
                } else if v <= star && star <= u {
                    f(star)
                } else {
                    f(u).max(f(v))
                };
                let got = s.godunov(u, v, s.flux(u), s.flux(v));
                assert!(
                    (got - expect).abs() <= 1e-15 + 1e-12 * expect,
                    "F({u}, {v}) = {got} vs {expect}"
                );
            }
        }
    }

    #[test]
    fn packing_cap_keeps_the_sediment_at_the_limit() {
        // A cell just below φmax under a dense suspension: without the cap
        // it would receive λ f(0.5) ≫ its room (φmax − 0.6399).
        let s = rz();
        let mut solver = ScalarSolver::new(
            s,
            None,
            Reconstruction::PiecewiseConstant,
            0.64,
            0.01,
            4,
            0.5,
        );
        solver.phi = vec![0.64, 0.6399, 0.5, 0.5];
        let before: f64 = solver.phi.iter().sum();
        let dt = solver.stable_step(0.9);
        solver.step(dt);
        let after: f64 = solver.phi.iter().sum();
        assert!((after - before).abs() < 1e-15, "{before} → {after}");
        assert_eq!(solver.phi[0], 0.64);
        assert_eq!(solver.phi[1], 0.64, "filled exactly: {:?}", solver.phi);
        assert!(solver.phi.iter().all(|&p| (0.0..=0.64).contains(&p)));
        assert_eq!(solver.capped, 1);
    }
}
