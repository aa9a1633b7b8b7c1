//! The particle engine's step as an ordered pipeline of ECS systems:
//!
//! ```text
//! index_parcels → sample_concentration → slip_velocities → mixture_correction
//!   → network_stress → choose_time_step → integrate → walls_floor_packing
//!   → advance_clock → record
//! ```
//!
//! Each system reads and writes whole component columns. Hot loops run on the
//! rayon pool the schedule is run inside; every per-parcel result depends only
//! on that parcel and on data fixed for the step, and every reduction runs in
//! parcel order, so results do not depend on the number of threads.
//!
//! Velocities are settling velocities, positive downward; heights z are
//! measured up from the floor.

use super::geometry::Section;
use super::kernel::Kernel;
use super::neighbours::NeighbourSearch;
use super::random;
use crate::physics::compression::{self, PowerLawStress};
use crate::physics::hindered::HinderedLaw;
use crate::physics::polydisperse::mlb_slip;
use crate::record::{Frame, RecordLayout, interface_height};
use crate::scenario::resolve::MAX_TOTAL_CLASSES;
use bevy_ecs::prelude::*;
use rayon::prelude::*;
use std::time::{Duration, Instant};

// ---------------------------------------------------------------- components

/// Position (x, y, z): x, y across the section from its centre, z up from the floor, m.
#[derive(Component, Debug, Clone, Copy, PartialEq)]
pub struct Position(pub [f64; 3]);

/// Current settling velocity, m/s (positive down).
#[derive(Component, Debug, Clone, Copy, PartialEq)]
pub struct SettlingVelocity(pub f64);

/// What a parcel stands for: a size class and the solids volume it carries.
#[derive(Component, Debug, Clone, Copy, PartialEq)]
pub struct Parcel {
    pub id: u32,
    pub class: u16,
    /// Solids volume represented, m³.
    pub volume: f64,
}

/// The suspension around a parcel, from the kernel estimate.
#[derive(Component, Debug, Clone, Copy, Default, PartialEq)]
pub struct LocalMix {
    /// Total solids volume fraction φ.
    pub phi: f64,
    /// Σ (ρ_k − ρ_f) φ_k, kg/m³: how much heavier than the fluid the suspension is.
    pub mixture_excess: f64,
    /// Fluid return flow of a closed vessel, −Σ φ_k slip_k, m/s (positive down).
    pub return_flow: f64,
    /// Total φ in the window *behind* the parcel (the other side from its
    /// motion); measured only with bed compression, else 0.
    pub phi_behind: f64,
}

/// The compressible bed's effect on a parcel (bed compression only).
#[derive(Component, Debug, Clone, Copy, Default, PartialEq)]
pub struct Consolidation {
    /// Factor 1 + G on the hindered velocity, G = ∂σe/∂z /(Δρ g φ) (see
    /// [`network_stress`]); 1 outside the network.
    pub factor: f64,
    /// Decay rate of the fastest concentration ripple the bed's diffusion
    /// smooths around this parcel, 1/s (bounds the time step).
    pub rate: f64,
}

/// Velocity of the parcel's class relative to the fluid, m/s (positive down).
#[derive(Component, Debug, Clone, Copy, Default, PartialEq)]
pub struct Slip(pub f64);

/// Velocity the parcel relaxes towards, m/s (positive down).
#[derive(Component, Debug, Clone, Copy, Default, PartialEq)]
pub struct TargetVelocity(pub f64);

/// Whether the parcel has come to rest in the bed.
#[derive(Component, Debug, Clone, Copy, Default, PartialEq)]
pub struct Resting(pub bool);

// ---------------------------------------------------------------- resources

/// Per-class constants.
#[derive(Resource, Debug, Clone)]
pub struct ClassTable {
    pub terminal_velocity: Vec<f64>,
    pub relaxation_time: Vec<f64>,
    /// ρ_class − ρ_f, kg/m³.
    pub density_excess: Vec<f64>,
    pub law: Vec<HinderedLaw>,
    pub max_packing: f64,
}

impl ClassTable {
    /// Monodisperse hindered velocity of class `c` at total volume fraction φ.
    #[inline]
    fn hindered(&self, c: usize, phi: f64) -> f64 {
        self.law[c].velocity(self.terminal_velocity[c], phi, self.max_packing)
    }

    /// MLB slip of class `c` in a suspension (φ, Σρ̄φ).
    #[inline]
    fn slip(&self, c: usize, phi: f64, mixture_excess: f64) -> f64 {
        if phi >= self.max_packing {
            return 0.0;
        }
        mlb_slip(
            self.hindered(c, phi),
            phi,
            self.density_excess[c],
            mixture_excess,
        )
    }
}

/// Vessel and numerical settings fixed for the run.
#[derive(Resource, Debug, Clone)]
pub struct Vessel {
    pub section: Section,
    pub top: f64,
    pub courant: f64,
    pub dispersion: f64,
    pub seed: u64,
}

/// Bed compression (one size class): the network's effective stress and
/// the buoyant weight Δρ g of the solids per unit volume, N/m³.
#[derive(Resource, Debug, Clone, Copy)]
pub struct Network {
    pub stress: PowerLawStress,
    pub weight: f64,
}

/// Under bed compression, the shortest part of a window along gravity, as a
/// fraction of its height b, that lies in the liquid (see
/// [`Kernel::window_anchor`]). A parcel on the floor has nothing below it,
/// so a window reaching down from the parcel itself would read an empty
/// floor however dense the bed is; the window is held at least b/4 above
/// the floor instead, where it still holds ~nb/4 parcels.
pub const MIN_WINDOW_FRACTION: f64 = 0.25;

/// Limit on |G| in [`network_stress`]: the network changes a parcel's
/// velocity by at most twice its hindered velocity.
pub const MAX_NETWORK_PUSH: f64 = 2.0;

/// The concentration kernel.
#[derive(Resource)]
pub struct KernelRes(pub Kernel);

/// The neighbour index of this step.
#[derive(Resource)]
pub struct Search(pub NeighbourSearch);

/// Simulated time.
#[derive(Resource, Debug, Clone)]
pub struct Clock {
    pub time: f64,
    pub dt: f64,
    pub step: u64,
    pub end: f64,
    pub record_interval: f64,
    /// Index of the next record; its time is `next_record * record_interval`.
    pub next_record: u64,
    /// Whether this step ended exactly on a record time.
    pub at_record: bool,
}

impl Clock {
    pub fn next_record_time(&self) -> f64 {
        (self.next_record as f64 * self.record_interval).min(self.end)
    }
    pub fn finished(&self) -> bool {
        self.time >= self.end
    }
}

/// The bed: parcels at rest, stacked at the packing limit from the floor up.
/// With bed compression there is no such stack (`volume` stays 0): parcels
/// stay free in a consolidating bed, and the recorded bed height is that of
/// the slabs from the floor up at or above the gel point.
#[derive(Resource, Debug, Clone, Default)]
pub struct Bed {
    /// Solids volume in the bed, m³.
    pub volume: f64,
    /// Cross-section area, m², and packing fraction.
    pub area: f64,
    pub max_packing: f64,
    /// Gel point φc with bed compression.
    pub gel_point: Option<f64>,
}

impl Bed {
    /// Height of the bed surface, m.
    pub fn height(&self) -> f64 {
        self.volume / (self.max_packing * self.area)
    }
}

/// Recorded frames.
#[derive(Resource, Debug, Clone)]
pub struct Recorder {
    pub layout: RecordLayout,
    pub frames: Vec<Frame>,
    pub initial_volume_fraction: f64,
}

/// Wall time spent in each pipeline stage.
#[derive(Resource, Debug, Clone, Default)]
pub struct StageTimes {
    pub stages: Vec<(&'static str, Duration)>,
    /// Parcel updates done (parcels × steps).
    pub parcel_steps: u64,
}

impl StageTimes {
    pub(crate) fn add(&mut self, name: &'static str, since: Instant) {
        let d = since.elapsed();
        match self.stages.iter_mut().find(|(n, _)| *n == name) {
            Some((_, t)) => *t += d,
            None => self.stages.push((name, d)),
        }
    }
}

/// Stage names in pipeline order (used for reports).
pub const STAGES: [&str; 10] = [
    "index_parcels",
    "sample_concentration",
    "slip_velocities",
    "mixture_correction",
    "network_stress",
    "choose_time_step",
    "integrate",
    "walls_floor_packing",
    "advance_clock",
    "record",
];

// ---------------------------------------------------------------- systems

const DENSE: &str = "parcel components are stored in tables";

/// Rebuild the neighbour index from the current positions.
pub fn index_parcels(
    mut search: ResMut<Search>,
    mut times: ResMut<StageTimes>,
    q: Query<(&Position, &Parcel)>,
) {
    let t0 = Instant::now();
    let mut pos = Vec::new();
    let mut class = Vec::new();
    let mut vol = Vec::new();
    for (p, parcel) in q.contiguous_iter().expect(DENSE) {
        pos.extend(p.iter().map(|p| p.0));
        class.extend(parcel.iter().map(|c| c.class));
        vol.extend(parcel.iter().map(|c| c.volume));
    }
    search.0.rebuild(&pos, &class, &vol);
    times.add("index_parcels", t0);
}

/// Kernel estimate of the local suspension around every moving parcel: total
/// and per-class volume fractions, the suspension's density excess, and the
/// fluid's return flow. With bed compression, also the total volume fraction
/// in the window behind the parcel, for the stress gradient.
pub fn sample_concentration(
    search: Res<Search>,
    kernel: Res<KernelRes>,
    classes: Res<ClassTable>,
    network: Option<Res<Network>>,
    mut times: ResMut<StageTimes>,
    mut q: Query<(
        &Position,
        &SettlingVelocity,
        &Parcel,
        &Resting,
        &mut LocalMix,
    )>,
) {
    let t0 = Instant::now();
    let (search, kernel, classes) = (&search.0, &kernel.0, &*classes);
    let compressible = network.is_some();
    let min_length = if compressible {
        MIN_WINDOW_FRACTION * kernel.window_height
    } else {
        0.0
    };
    let nc = classes.terminal_velocity.len();
    let self_weight = kernel.weight_scaled(0.0, 0.0, 0.0, false);
    for (pos, vel, parcel, rest, mut mix) in q.contiguous_iter_mut().expect(DENSE) {
        let mix = mix.bypass_change_detection();
        pos.par_iter()
            .zip(vel.par_iter())
            .zip(parcel.par_iter())
            .zip(rest.par_iter())
            .zip(mix.par_iter_mut())
            .for_each(|((((p, v), own), r), m)| {
                if r.0 {
                    return; // the bed does not move; its parcels still count as neighbours
                }
                // Look ahead along the parcel's motion (see `kernel`).
                let up = v.0 < 0.0;
                let mut phi_k = [0.0f64; MAX_TOTAL_CLASSES];
                let [x, y, z] = p.0;
                // Under compression the window keeps a minimum length in the
                // liquid (it then still holds the parcel itself).
                let anchor = |up| kernel.window_anchor(z, up, min_length);
                let z_ahead = anchor(up);
                search.for_each_ahead(search.scale([x, y, z_ahead]), up, |c, v, sx, sy, sz| {
                    phi_k[c as usize] += v * kernel.weight_scaled(sx, sy, sz, up);
                });
                // The suspension *around* a parcel: leave its own volume out.
                phi_k[own.class as usize] =
                    (phi_k[own.class as usize] - own.volume * self_weight).max(0.0);
                let inside = kernel.inside_fraction(x, y, z_ahead, up);
                let (mut phi, mut excess) = (0.0, 0.0);
                for (k, f) in phi_k[..nc].iter_mut().enumerate() {
                    *f /= inside;
                    phi += *f;
                    excess += *f * classes.density_excess[k];
                }
                let mut uf = 0.0;
                for (k, f) in phi_k[..nc].iter().enumerate() {
                    if *f > 0.0 {
                        uf -= f * classes.slip(k, phi, excess);
                    }
                }
                // The other side, for the stress gradient across the parcel.
                let mut behind = 0.0;
                if compressible {
                    let z_behind = anchor(!up);
                    search.for_each_ahead(
                        search.scale([x, y, z_behind]),
                        !up,
                        |_, v, sx, sy, sz| {
                            behind += v * kernel.weight_scaled(sx, sy, sz, !up);
                        },
                    );
                    behind = (behind - own.volume * self_weight).max(0.0)
                        / kernel.inside_fraction(x, y, z_behind, !up);
                }
                *m = LocalMix {
                    phi,
                    mixture_excess: excess,
                    return_flow: uf,
                    phi_behind: behind,
                };
            });
    }
    times.add("sample_concentration", t0);
}

/// Each parcel's slip relative to the fluid (MLB).
pub fn slip_velocities(
    classes: Res<ClassTable>,
    mut times: ResMut<StageTimes>,
    mut q: Query<(&Parcel, &LocalMix, &Resting, &mut Slip)>,
) {
    let t0 = Instant::now();
    for (parcel, mix, rest, mut slip) in q.contiguous_iter_mut().expect(DENSE) {
        let slip = slip.bypass_change_detection();
        parcel
            .par_iter()
            .zip(mix.par_iter())
            .zip(rest.par_iter())
            .zip(slip.par_iter_mut())
            .for_each(|(((p, m), r), s)| {
                s.0 = if r.0 {
                    0.0
                } else {
                    classes.slip(p.class as usize, m.phi, m.mixture_excess)
                };
            });
    }
    times.add("slip_velocities", t0);
}

/// Add the fluid's return flow of a closed vessel: velocity relative to the vessel.
pub fn mixture_correction(
    mut times: ResMut<StageTimes>,
    mut q: Query<(&Slip, &LocalMix, &Resting, &mut TargetVelocity)>,
) {
    let t0 = Instant::now();
    for (slip, mix, rest, mut target) in q.contiguous_iter_mut().expect(DENSE) {
        let target = target.bypass_change_detection();
        slip.par_iter()
            .zip(mix.par_iter())
            .zip(rest.par_iter())
            .zip(target.par_iter_mut())
            .for_each(|(((s, m), r), t)| {
                t.0 = if r.0 { 0.0 } else { s.0 + m.return_flow };
            });
    }
    times.add("mixture_correction", t0);
}

/// Bed compression: the network's stress gradient changes each parcel's
/// velocity (nothing happens without `models.compression`).
///
/// *Velocity.* Bürger–Concha (physics.md §6.1) with x depth:
/// ∂φ/∂t + ∂/∂x [f_bk(φ) − a(φ) ∂φ/∂x] = 0, a = f_bk σe′/(Δρ g φ). With
/// z = H − x the height (∂x = −∂z), the solids flux *downward* is
/// f_bk + a ∂φ/∂z = f_bk(φ) [1 + σe′(φ) ∂φ/∂z /(Δρ g φ)], and dividing by φ
/// the solids settle (positive down, as every velocity here) at
///
/// ```text
/// u = v_hs(φ) (1 + G),   G = (∂σe/∂z) / (Δρ g φ)   (z up; = −∂σe/∂x /(Δρ g φ)).
/// ```
///
/// In a bed σe grows downward, so G < 0: the network carries part of the
/// weight and slows the settling; u = 0 where ∂σe/∂z = −Δρ g φ, the
/// equilibrium of the final sediment (`physics::compression`, eq. 1). One
/// size class: the hindered velocity here is v_hs (the closed vessel's
/// return flow is already in the target).
///
/// *Gradient from the parcels.* The parcel's look-ahead window and the window
/// behind it (each of height b, one above and one below it) give φ_up and
/// φ_down, averages over the liquid part of each; their centres lie half
/// those lengths above and below the parcel (≥ b/2 apart at the floor). The
/// gradient is the difference of the *stresses*,
/// ∂σe/∂z ≈ (σe(φ_up) − σe(φ_down))/Δc, not σe′(φ) times a difference of φ:
/// σe′ jumps from 0 to σ0 k/φc at the gel point, and the difference of σe
/// sees the true stress jump across the bed surface whatever the parcel's own
/// φ. The φ in G is the centred estimate (the two windows' average, weighted
/// by their lengths) and v_hs keeps the look-ahead φ of the settling law.
///
/// *Noise and stability.* The windows hold ~2 nb parcels, so the estimate is
/// noisy, and the stress, a steep power of φ, amplifies it. Two things keep
/// this in hand. (1) The time step: the gradient term is a diffusion with
/// coefficient a = v_hs σe′/(Δρ g). For a ripple φ̂ e^(iκz) the two window
/// averages differ by φ̂ e^(iκz) (2 cos κb − 2)/(iκb), so with Δc = b the
/// ripple decays at (a/b²)(2 − 2 cos κb), fastest, 4a/b², at wavelength 2b;
/// near the floor Δc is shorter and the rate 4a/(b Δc). An explicit step
/// longer than 2/rate would amplify the ripple instead. Each parcel reports
/// that rate (σe′ at the denser window) and [`choose_time_step`] keeps
/// Δt ≤ 2 C/rate, so with C = `numerics.courant` = 0.5 ripples decay
/// without changing sign. Because the correction is a diffusion, noise in the
/// parcels' arrangement is smoothed by it rather than fed — except ripples
/// of wavelength b/m, whose window averages are equal (the rate above
/// vanishes at κb = 2πm): the flat windows neither see nor damp them, and a
/// bed keeps such layering from its formation (visible in profiles binned
/// finer than b). (2) A limiter: |G| ≤ [`MAX_NETWORK_PUSH`]. At equilibrium
/// G = −1, so the limiter does not move the steady bed; it only stops a rare
/// overestimate from dictating the Courant step. (3) Near the floor the
/// windows keep at least b/4 in the liquid ([`MIN_WINDOW_FRACTION`]), so the
/// lowest parcels, which have nothing below them, still read the bed's
/// concentration there; their centres are then ≥ 3b/8 apart.
pub fn network_stress(
    network: Option<Res<Network>>,
    kernel: Res<KernelRes>,
    mut times: ResMut<StageTimes>,
    mut q: Query<(
        &Position,
        &SettlingVelocity,
        &LocalMix,
        &Resting,
        &mut TargetVelocity,
        &mut Consolidation,
    )>,
) {
    let Some(network) = network else {
        return;
    };
    let t0 = Instant::now();
    let kernel = &kernel.0;
    let (stress, weight) = (network.stress, network.weight);
    let b = kernel.window_height;
    let min_length = MIN_WINDOW_FRACTION * b;
    for (pos, vel, mix, rest, mut target, mut cons) in q.contiguous_iter_mut().expect(DENSE) {
        let target = target.bypass_change_detection();
        let cons = cons.bypass_change_detection();
        pos.par_iter()
            .zip(vel.par_iter())
            .zip(mix.par_iter())
            .zip(rest.par_iter())
            .zip(target.par_iter_mut())
            .zip(cons.par_iter_mut())
            .for_each(|(((((p, v), m), r), t), c)| {
                if r.0 {
                    *c = Consolidation::default();
                    return;
                }
                let up = v.0 < 0.0; // as in `sample_concentration`
                let (phi_up, phi_down) = if up {
                    (m.phi, m.phi_behind)
                } else {
                    (m.phi_behind, m.phi)
                };
                let z = p.0[2];
                let (z_up, z_down) = (
                    kernel.window_anchor(z, true, min_length),
                    kernel.window_anchor(z, false, min_length),
                );
                let above = kernel.window_inside(z_up, true);
                let below = kernel.window_inside(z_down, false);
                let spacing =
                    kernel.window_centre(z_up, true) - kernel.window_centre(z_down, false);
                let phi = (above * phi_up + below * phi_down) / (above + below);
                let jump = stress.stress(phi_up) - stress.stress(phi_down);
                let g = if jump != 0.0 && phi > 0.0 {
                    jump / (spacing * weight * phi)
                } else {
                    0.0
                };
                let factor = 1.0 + g.clamp(-MAX_NETWORK_PUSH, MAX_NETWORK_PUSH);
                let mobility = t.0.abs();
                let a = compression::diffusion(
                    mobility,
                    stress.stress_derivative(phi_up.max(phi_down)),
                    1.0,
                    weight,
                );
                t.0 *= factor;
                *c = Consolidation {
                    factor,
                    rate: 4.0 * a / (b * spacing),
                };
            });
    }
    times.add("network_stress", t0);
}

/// Adaptive step: the fastest parcel moves at most `courant` kernel
/// window heights, a random walk (dispersion) and the compressible bed's
/// diffusion stay within their explicit limits, and steps end exactly on
/// record times.
pub fn choose_time_step(
    mut clock: ResMut<Clock>,
    vessel: Res<Vessel>,
    kernel: Res<KernelRes>,
    mut times: ResMut<StageTimes>,
    q: Query<(&TargetVelocity, &SettlingVelocity, &Consolidation)>,
) {
    let t0 = Instant::now();
    let (mut vmax, mut rate): (f64, f64) = (0.0, 0.0);
    for (target, v, cons) in q.contiguous_iter().expect(DENSE) {
        // max is exact in any order, so the parallel reduction is reproducible.
        let m = target
            .par_iter()
            .zip(v.par_iter())
            .map(|(t, v)| t.0.abs().max(v.0.abs()))
            .reduce(|| 0.0, f64::max);
        vmax = vmax.max(m);
        let r = cons.par_iter().map(|c| c.rate).reduce(|| 0.0, f64::max);
        rate = rate.max(r);
    }
    let h = kernel.0.window_height;
    let mut dt = if vmax > 0.0 {
        vessel.courant * h / vmax
    } else {
        f64::INFINITY
    };
    if vessel.dispersion > 0.0 {
        // A random-walk step of at most the Courant fraction of the kernel.
        dt = dt.min((vessel.courant * h).powi(2) / (2.0 * vessel.dispersion));
    }
    if rate > 0.0 {
        // The compressible bed's diffusion (see `network_stress`).
        dt = dt.min(2.0 * vessel.courant / rate);
    }
    let to_record = clock.next_record_time() - clock.time;
    clock.at_record = dt >= to_record;
    clock.dt = if clock.at_record { to_record } else { dt };
    times.add("choose_time_step", t0);
}

/// Relax each parcel's velocity towards its target with its own relaxation
/// time, exactly for a constant target (stable for any step), and move it.
pub fn integrate(
    clock: Res<Clock>,
    classes: Res<ClassTable>,
    vessel: Res<Vessel>,
    mut times: ResMut<StageTimes>,
    mut q: Query<(
        &mut Position,
        &mut SettlingVelocity,
        &TargetVelocity,
        &Parcel,
        &Resting,
    )>,
) {
    let t0 = Instant::now();
    let (dt, step) = (clock.dt, clock.step);
    let walk = (2.0 * vessel.dispersion * dt).sqrt();
    let seed = vessel.seed;
    for (mut pos, mut vel, target, parcel, rest) in q.contiguous_iter_mut().expect(DENSE) {
        let pos = pos.bypass_change_detection();
        let vel = vel.bypass_change_detection();
        pos.par_iter_mut()
            .zip(vel.par_iter_mut())
            .zip(target.par_iter())
            .zip(parcel.par_iter())
            .zip(rest.par_iter())
            .for_each(|((((p, v), t), parcel), r)| {
                if r.0 {
                    return;
                }
                let tau = classes.relaxation_time[parcel.class as usize];
                let decay = (-dt / tau).exp();
                let lag = v.0 - t.0;
                // ∫ v dt for v(t) = T + (v₀ − T) e^(−t/τ).
                let down = t.0 * dt + lag * tau * (1.0 - decay);
                v.0 = t.0 + lag * decay;
                p.0[2] -= down;
                if walk > 0.0 {
                    // The parcel's own stream, counters from the step: independent of threads.
                    let s = random::stream(parcel.id, random::Purpose::Dispersion);
                    let k = 3 * step;
                    p.0[0] += walk * random::normal(seed, s, k);
                    p.0[1] += walk * random::normal(seed, s, k + 1);
                    p.0[2] += walk * random::normal(seed, s, k + 2);
                }
            });
    }
    times.add("integrate", t0);
}

/// Keep parcels in the liquid (mirror at side walls and the free surface) and
/// build the bed: a parcel that reaches the bed surface comes to rest on top
/// of it, at the packing limit, so the bed grows from the floor by exactly the
/// solids volume that arrives. A parcel already packed (φ ≥ φmax around it)
/// within one kernel height of the bed joins it too: the kernel blurs the bed
/// surface over that height, and such a parcel would otherwise hang there.
///
/// With bed compression there is no stack: the network holds the parcels
/// (see [`network_stress`]), the floor reflects them like the free surface,
/// and none is put to rest.
pub fn walls_floor_packing(
    vessel: Res<Vessel>,
    kernel: Res<KernelRes>,
    network: Option<Res<Network>>,
    mut bed: ResMut<Bed>,
    mut times: ResMut<StageTimes>,
    mut q: Query<(
        &mut Position,
        &mut SettlingVelocity,
        &Parcel,
        &mut Resting,
        &LocalMix,
    )>,
) {
    let t0 = Instant::now();
    let top = vessel.top;
    let section = vessel.section;
    let compressible = network.is_some();
    let bed_top = bed.height();
    let packed_reach = bed_top + 2.0 * kernel.0.window_height;
    let mut arrivals: Vec<(f64, u32, usize, usize)> = Vec::new();
    for (table, (mut pos, _, parcel, rest, mix)) in
        q.contiguous_iter_mut().expect(DENSE).enumerate()
    {
        let pos = pos.bypass_change_detection();
        pos.par_iter_mut().zip(rest.par_iter()).for_each(|(p, r)| {
            if r.0 {
                return;
            }
            let (x, y) = section.reflect(p.0[0], p.0[1]);
            p.0[0] = x;
            p.0[1] = y;
            if p.0[2] > top {
                p.0[2] = (2.0 * top - p.0[2]).max(0.0);
            }
            if compressible && p.0[2] < 0.0 {
                p.0[2] = (-p.0[2]).min(top);
            }
        });
        if compressible {
            continue;
        }
        for (i, (p, r)) in pos.iter().zip(rest.iter()).enumerate() {
            let packed = mix[i].phi >= bed.max_packing && p.0[2] <= packed_reach;
            if !r.0 && (p.0[2] <= bed_top || packed) {
                arrivals.push((p.0[2], parcel[i].id, table, i));
            }
        }
    }
    if !arrivals.is_empty() {
        // Deepest first, ties by parcel id: a fixed order whatever the threads.
        arrivals.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
        let mut tables: Vec<_> = q.contiguous_iter_mut().expect(DENSE).collect();
        for &(_, _, table, i) in &arrivals {
            let (pos, vel, parcel, rest, _) = &mut tables[table];
            let v = parcel[i].volume;
            let layer = v / (bed.max_packing * bed.area);
            pos.bypass_change_detection()[i].0[2] = bed.height() + 0.5 * layer;
            vel.bypass_change_detection()[i].0 = 0.0;
            rest.bypass_change_detection()[i].0 = true;
            bed.volume += v;
        }
    }
    times.add("walls_floor_packing", t0);
}

/// Advance simulated time; land exactly on record times.
pub fn advance_clock(mut clock: ResMut<Clock>, mut times: ResMut<StageTimes>, q: Query<&Parcel>) {
    let t0 = Instant::now();
    if clock.at_record {
        clock.time = clock.next_record_time();
    } else {
        clock.time += clock.dt;
    }
    clock.step += 1;
    times.parcel_steps += q.iter().len() as u64;
    times.add("advance_clock", t0);
}

/// Record a frame when the step ended on a record time.
pub fn record(
    mut clock: ResMut<Clock>,
    mut recorder: ResMut<Recorder>,
    bed: Res<Bed>,
    mut times: ResMut<StageTimes>,
    q: Query<(&Position, &Parcel)>,
) {
    if !clock.at_record {
        return;
    }
    let t0 = Instant::now();
    let frame = take_frame(clock.time, &recorder, &bed, &q);
    recorder.frames.push(frame);
    clock.next_record += 1;
    times.add("record", t0);
}

/// Bin parcel volumes into height slabs (exact: every parcel's whole volume
/// goes to the slab holding its centre) and derive the interface and bed.
pub fn take_frame(time: f64, rec: &Recorder, bed: &Bed, q: &Query<(&Position, &Parcel)>) -> Frame {
    let layout = &rec.layout;
    let nz = layout.nz();
    let top = *layout.z_edges.last().unwrap_or(&1.0);
    let dz = top / nz as f64;
    let mut phi_class = vec![0.0; layout.nclasses() * nz];
    let mut solids = 0.0;
    for (pos, parcel) in q.iter() {
        if !(0.0..=top).contains(&pos.0[2]) {
            continue; // left through a thickener's outlet (never in a batch column)
        }
        let k = ((pos.0[2] / dz).floor().max(0.0) as usize).min(nz - 1);
        phi_class[parcel.class as usize * nz + k] += parcel.volume;
        solids += parcel.volume;
    }
    let slab = layout.area * dz;
    for v in &mut phi_class {
        *v /= slab;
    }
    let mut frame = Frame {
        time,
        phi_class,
        interface_height: 0.0,
        bed_height: bed.height(),
        solids_volume: solids,
    };
    if let Some(gel) = bed.gel_point {
        // The consolidating bed: slabs from the floor up where the network
        // carries stress (the continuum engine's rule, on the slabs).
        let stack = frame
            .phi_total(nz)
            .iter()
            .take_while(|&&p| p >= gel)
            .count();
        frame.bed_height = stack as f64 * dz;
    }
    frame.interface_height = interface_height(
        &frame.phi_total(nz),
        &layout.z,
        rec.initial_volume_fraction,
        top,
    );
    frame
}
