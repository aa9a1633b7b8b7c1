//! The particle engine's step as an ordered pipeline of ECS systems:
//!
//! ```text
//! index_parcels → sample_concentration → slip_velocities → mixture_correction
//!   → choose_time_step → integrate → walls_floor_packing → advance_clock → record
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
#[derive(Resource, Debug, Clone, Default)]
pub struct Bed {
    /// Solids volume in the bed, m³.
    pub volume: f64,
    /// Cross-section area, m², and packing fraction.
    pub area: f64,
    pub max_packing: f64,
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
pub const STAGES: [&str; 9] = [
    "index_parcels",
    "sample_concentration",
    "slip_velocities",
    "mixture_correction",
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
/// fluid's return flow.
pub fn sample_concentration(
    search: Res<Search>,
    kernel: Res<KernelRes>,
    classes: Res<ClassTable>,
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
                search.for_each_ahead(search.scale(p.0), up, |c, v, sx, sy, sz| {
                    phi_k[c as usize] += v * kernel.weight_scaled(sx, sy, sz, up);
                });
                // The suspension *around* a parcel: leave its own volume out.
                phi_k[own.class as usize] =
                    (phi_k[own.class as usize] - own.volume * self_weight).max(0.0);
                let inside = kernel.inside_fraction(p.0[0], p.0[1], p.0[2], up);
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
                *m = LocalMix {
                    phi,
                    mixture_excess: excess,
                    return_flow: uf,
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

/// Adaptive step: the fastest parcel moves at most `courant` kernel
/// window heights, and steps end exactly on record times.
pub fn choose_time_step(
    mut clock: ResMut<Clock>,
    vessel: Res<Vessel>,
    kernel: Res<KernelRes>,
    mut times: ResMut<StageTimes>,
    q: Query<(&TargetVelocity, &SettlingVelocity)>,
) {
    let t0 = Instant::now();
    let mut vmax: f64 = 0.0;
    for (target, v) in q.contiguous_iter().expect(DENSE) {
        // max is exact in any order, so the parallel reduction is reproducible.
        let m = target
            .par_iter()
            .zip(v.par_iter())
            .map(|(t, v)| t.0.abs().max(v.0.abs()))
            .reduce(|| 0.0, f64::max);
        vmax = vmax.max(m);
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
pub fn walls_floor_packing(
    vessel: Res<Vessel>,
    kernel: Res<KernelRes>,
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
        });
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
    frame.interface_height = interface_height(
        &frame.phi_total(nz),
        &layout.z,
        rec.initial_volume_fraction,
        top,
    );
    frame
}
