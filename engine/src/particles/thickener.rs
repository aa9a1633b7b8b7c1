//! The continuous thickener in the particle engine: feed injection, bulk
//! transport, the moving bed, removal at the outlets and the solids ledger.
//!
//! These systems are added to the batch pipeline only when the scenario is a
//! thickener (see [`super::ParticleEngine::new`]):
//!
//! ```text
//! … choose_time_step → limit_step → bulk_transport → integrate → outlets
//!   → walls_floor_packing → inject_feed → advance_clock → land_on_change
//!   → record → sample_outlets
//! ```
//!
//! and the kernel is opened at the floor and the lip (see *The outlets*).
//!
//! # Velocities
//!
//! With volume-average (bulk) velocity `q` the fluid moves at
//! `u_f = q − Σ φ_k s_k` (s_k the MLB slips relative to the fluid), so class
//! `i` moves at `u_i = u_f + s_i = q + (s_i − Σ φ_k s_k)`. The bracket is what
//! the batch pipeline already computes as the target velocity (slip plus the
//! closed vessel's return flow, whose volume-average velocity is zero): the
//! return-flow correction is unchanged, it is taken relative to the
//! suspension's volume-average velocity instead of the vessel, and the
//! thickener adds `q` = the Bürger–Diehl bulk velocity ([`Operation::bulk_velocity`],
//! `+q_u` below the feed, `−q_e` above). For one species the sum is
//! `q + w(φ)`, the flux `qφ + φw(φ)` of the Bürger–Diehl model.
//!
//! The parcel's `SettlingVelocity` therefore stays the velocity relative to
//! the suspension (the batch velocity), and [`bulk_transport`] moves every
//! parcel by `q·Δt` as a separate displacement before `integrate` adds the
//! settling one. This keeps the kernel's look-ahead right: concentration waves
//! move at `φ w′(φ) < 0` relative to a settling parcel whatever `q` is, so a
//! parcel looks along its *settling* direction, also when the upflow above the
//! feed carries it up.
//!
//! # Feed
//!
//! Each step owes each class the fed volume `∫ A Q_f φ_f s_i / A dt` over the
//! step (two-point Gauss quadrature: exact for the piecewise-linear
//! schedules, since steps never straddle a breakpoint — [`limit_step`] lands
//! on them). The debt is a per-class carry; while it covers a parcel volume a
//! parcel is injected and its volume paid off, so the injected volume trails
//! the fed volume by less than one parcel per class at any time. Parcels enter
//! at the feed level exactly (a point source, as in the model), spread
//! uniformly across the section by the parcel's own counter-based stream
//! ([`random::Purpose::Seeding`] with the new parcel's id), with ids counting
//! on from the initial parcels in class order: reproducible bit for bit for
//! any thread count. A parcel at the feed level moves with the bulk velocity
//! above it, `−q_e`, plus its settling velocity, so it sinks into the
//! thickening zone when it settles faster than the upflow and is carried up
//! otherwise: the split of the feed is left to the local concentration.
//!
//! # Parcel volume
//!
//! Every class has one parcel volume, `v_i = s_i φ_ref A H / N_i`, with `N_i`
//! the class's share of `run.parcels` (as in a batch column) and
//! `φ_ref = max(φ0, largest feed fraction of the run)`: `run.parcels` is the
//! number of parcels the tank holds when full at the richer of its initial
//! content and its feed. A tank that starts empty (φ0 = 0) thus gets the
//! parcel volume of the feed; the thickened zone then holds a few times more
//! parcels per volume (C_u/C_f), which the kernel, sized for `run.parcels`,
//! averages over more neighbours. A tank with content gets
//! `round(N_i φ0/φ_ref)` (at least one) parcels per class of the volume that
//! holds exactly the initial inventory.
//!
//! # The outlets
//!
//! In the model, settling acts inside the vessel only: below the floor the
//! underflow's suspension moves down with `q_u`, above the lip the
//! overflow's moves up with `q_e`, each at its outlet concentration. The
//! engine keeps that suspension: a parcel that crosses the floor (z < 0) or
//! the lip (z > H) is booked to its outlet once and becomes an *outlet
//! parcel*, moved by the bulk flow only (it is flagged resting, so it neither
//! samples nor settles) until it is one kernel window beyond the outlet, where
//! it is despawned. Outlet parcels count as neighbours, and the kernel is not
//! cut at the floor and the lip (`Kernel::bottom`/`top` open): a parcel just
//! above the floor sees the dense underflow below it and slows down, as the
//! cells just above the floor do in a finite-volume scheme whose boundary
//! flux is `q_u φ`. Without it every parcel reaching the floor would leave at
//! its full settling speed and the thickening zone would pass any flux up to
//! the local maximum of `q_u φ + φ w(φ)` on its dilute branch; with it a
//! blanket builds from the floor and the underflow is limited to Yoshioka's
//! flux (tests/tests/thickener_particles.rs).
//!
//! # Moving bed
//!
//! The packed bed (parcels resting at φmax, see `walls_floor_packing`) is not
//! at rest in a thickener: it moves down as a plug with `q_u`, applied by
//! [`bulk_transport`] to resting parcels too, and its lowest parcels leave
//! with the underflow (the bed's volume is reduced by what leaves). A resting
//! parcel that finds itself above the feed level (a bed grown past the feed)
//! is released into the suspension, where the upflow takes it. The batch
//! column never runs these systems and is unchanged.
//!
//! # The ledger and the outlet concentrations
//!
//! Every step books the injected volumes and the volumes that crossed the
//! outlets into the [`OutletLedger`]; the inventory is the sum of the volumes
//! of the parcels inside (outlet parcels excluded), so the solids balance
//! closes to rounding (only summation order differs).
//!
//! Outlet concentrations at a record are the solids volume that crossed the
//! outlet since the previous record over the suspension volume that the
//! outlet passed in that interval, `C_u = ρ Σ V_u / ∫ Q_u dt` (and the same
//! for the overflow): the flow-weighted mean concentration of what left during
//! the interval. Parcels leave one at a time, so an instantaneous estimate
//! would be a train of spikes; the interval mean is unbiased, its relative
//! noise about `1/√n` for `n` parcels leaving per interval, and summed over
//! intervals it is exactly the ledger's. At t = 0 nothing has left yet and
//! both are 0.

use super::geometry::Section;
use super::pipeline::*;
use super::random;
use crate::checkpoint::{CheckpointError, Reader, Writer};
use crate::operation::{Operation, OutletLedger};
use crate::record::{OutletSample, OutletSeries, blanket_level};
use crate::scenario::Setup;
use bevy_ecs::prelude::*;
use rayon::prelude::*;
use std::time::Instant;

/// Two-point Gauss–Legendre nodes on [0, 1]: ½ ∓ 1/(2√3), weights ½ each
/// (Abramowitz & Stegun 25.4.29); exact for cubics.
const GAUSS2: [f64; 2] = [0.211_324_865_405_187_1, 0.788_675_134_594_812_9];

/// The reference fraction `φ_ref` that sets the parcel volume (module docs).
pub fn reference_fraction(setup: &Setup, op: &Operation) -> f64 {
    // A schedule is constant between steps and linear between table rows,
    // so its values on [0, end] lie between those at 0, at the end and at
    // its breakpoints inside.
    let end = setup.run.end_time;
    let s = &op.feed_solids;
    s.breakpoints()
        .into_iter()
        .filter(|&t| t > 0.0 && t < end)
        .map(|t| s.at(t))
        .chain([s.at(0.0), s.at(end)])
        .fold(setup.initial_volume_fraction, f64::max)
}

/// Parcel volume of each class, m³ (module docs).
pub fn parcel_volumes(setup: &Setup, op: &Operation) -> Vec<f64> {
    let shares: Vec<f64> = setup.classes.iter().map(|c| c.volume_share).collect();
    let counts = super::parcels_per_class(&shares, setup.run.parcels);
    let phi_ref = reference_fraction(setup, op);
    let (area, height) = (setup.column.area, setup.column.height);
    shares
        .iter()
        .zip(&counts)
        .map(|(s, &n)| s * phi_ref * area * height / n as f64)
        .collect()
}

/// Initial parcels per class of a thickener (module docs): none in an
/// empty tank.
pub fn initial_counts(setup: &Setup, op: &Operation) -> Vec<u64> {
    let shares: Vec<f64> = setup.classes.iter().map(|c| c.volume_share).collect();
    let counts = super::parcels_per_class(&shares, setup.run.parcels);
    let phi0 = setup.initial_volume_fraction;
    if phi0 <= 0.0 {
        return vec![0; counts.len()];
    }
    let ratio = phi0 / reference_fraction(setup, op);
    counts
        .iter()
        .map(|&n| ((n as f64 * ratio).round() as u64).max(1))
        .collect()
}

/// Feed solids volume per class (m³) and underflow and overflow volumes
/// (m³) over the step [t, t + dt], by two-point Gauss quadrature: exact
/// while the schedules are linear over the step, which [`limit_step`] makes
/// sure of by ending steps on their breakpoints.
pub fn over_step(op: &Operation, t: f64, dt: f64) -> (Vec<f64>, f64, f64) {
    let nc = op.feed_class_share.len();
    let mut fed = vec![0.0; nc];
    let mut flux = vec![0.0; nc];
    let (mut qu, mut qe) = (0.0, 0.0);
    for s in GAUSS2 {
        let ts = t + s * dt;
        op.feed_solids_flux(ts, &mut flux);
        for (o, f) in fed.iter_mut().zip(&flux) {
            *o += 0.5 * dt * f * op.area;
        }
        let p = op.at(ts);
        qu += 0.5 * dt * p.underflow_flow;
        qe += 0.5 * dt * p.overflow_flow;
    }
    (fed, qu, qe)
}

/// The thickener's state in the world.
#[derive(Resource, Debug, Clone)]
pub struct Tank {
    pub op: Operation,
    pub section: Section,
    /// Overflow lip above the floor, m.
    pub top: f64,
    pub courant: f64,
    pub seed: u64,
    /// Volume of an injected parcel per class, m³.
    pub parcel_volume: Vec<f64>,
    /// Fed volume per class not yet injected, m³ (less than one parcel).
    pub carry: Vec<f64>,
    /// Id of the next injected parcel.
    pub next_id: u32,
    pub ledger: OutletLedger,
    /// Volumes per class that left during this step, m³.
    step_underflow: Vec<f64>,
    step_overflow: Vec<f64>,
    /// Volumes per class that left since the last record, m³, and the
    /// outlet flows integrated over that interval, m³.
    interval_underflow: Vec<f64>,
    interval_overflow: Vec<f64>,
    interval_underflow_flow: f64,
    interval_overflow_flow: f64,
    /// A schedule breakpoint the current step ends on.
    land_at: Option<f64>,
    /// By parcel id: whether the parcel has left through an outlet.
    left: Vec<bool>,
    pub samples: Vec<OutletSample>,
}

impl Tank {
    pub fn new(setup: &Setup, op: &Operation, initial_inventory: Vec<f64>, next_id: u32) -> Self {
        let nc = setup.classes.len();
        Tank {
            op: op.clone(),
            section: Section::of_column(&setup.column),
            top: setup.column.height,
            courant: setup.numerics.courant,
            seed: setup.run.seed,
            parcel_volume: parcel_volumes(setup, op),
            carry: vec![0.0; nc],
            next_id,
            ledger: OutletLedger::new(initial_inventory),
            step_underflow: vec![0.0; nc],
            step_overflow: vec![0.0; nc],
            interval_underflow: vec![0.0; nc],
            interval_overflow: vec![0.0; nc],
            interval_underflow_flow: 0.0,
            interval_overflow_flow: 0.0,
            land_at: None,
            left: vec![false; next_id as usize],
            samples: Vec::new(),
        }
    }

    /// Append the evolving state to a checkpoint (see `super::state`).
    pub fn save(&self, w: &mut Writer) {
        w.f64s(&self.carry);
        w.u32(self.next_id);
        w.f64s(&self.ledger.fed);
        w.f64s(&self.ledger.underflow);
        w.f64s(&self.ledger.overflow);
        w.f64s(&self.ledger.initial_inventory);
        w.f64s(&self.step_underflow);
        w.f64s(&self.step_overflow);
        w.f64s(&self.interval_underflow);
        w.f64s(&self.interval_overflow);
        w.f64(self.interval_underflow_flow);
        w.f64(self.interval_overflow_flow);
        w.opt_f64(self.land_at);
        w.bools(&self.left);
        w.samples(&self.samples);
    }

    /// Read back what [`save`](Self::save) wrote; `ids` are the restored
    /// parcels' ids.
    pub fn restore(&mut self, r: &mut Reader, ids: &[u32]) -> Result<(), CheckpointError> {
        let nc = self.parcel_volume.len();
        self.carry = r.f64s_of(nc, "the feed carry")?;
        self.next_id = r.u32()?;
        self.ledger.fed = r.f64s_of(nc, "the ledger")?;
        self.ledger.underflow = r.f64s_of(nc, "the ledger")?;
        self.ledger.overflow = r.f64s_of(nc, "the ledger")?;
        self.ledger.initial_inventory = r.f64s_of(nc, "the ledger")?;
        self.step_underflow = r.f64s_of(nc, "the step's outflow")?;
        self.step_overflow = r.f64s_of(nc, "the step's outflow")?;
        self.interval_underflow = r.f64s_of(nc, "the interval's outflow")?;
        self.interval_overflow = r.f64s_of(nc, "the interval's outflow")?;
        self.interval_underflow_flow = r.f64()?;
        self.interval_overflow_flow = r.f64()?;
        self.land_at = r.opt_f64()?;
        self.left = r.bools()?;
        self.samples = r.samples()?;
        if self.left.len() != self.next_id as usize || ids.iter().any(|&i| i >= self.next_id) {
            return Err(CheckpointError::Mismatch(
                "the parcel ids do not match the tank's count".into(),
            ));
        }
        Ok(())
    }

    /// The outlet series recorded so far.
    pub fn series(&self) -> OutletSeries {
        OutletSeries {
            feed_level: self.op.feed_level,
            overflow_level: self.top,
            blanket_threshold: self.op.blanket_threshold * self.op.mean_density(),
            samples: self.samples.clone(),
        }
    }
}

/// Shorten the step so that the bulk flow moves no parcel more than the
/// Courant fraction of the kernel window together with its settling, and end
/// it on the next schedule breakpoint.
pub fn limit_step(
    mut clock: ResMut<Clock>,
    mut tank: ResMut<Tank>,
    kernel: Res<KernelRes>,
    mut times: ResMut<StageTimes>,
    q: Query<(&TargetVelocity, &SettlingVelocity)>,
) {
    let t0 = Instant::now();
    let mut vmax: f64 = 0.0;
    for (target, v) in q
        .contiguous_iter()
        .expect("parcel components are stored in tables")
    {
        let m = target
            .par_iter()
            .zip(v.par_iter())
            .map(|(t, v)| t.0.abs().max(v.0.abs()))
            .reduce(|| 0.0, f64::max);
        vmax = vmax.max(m);
    }
    let t = clock.time;
    let dt0 = clock.dt;
    let qmax = tank.op.max_bulk_speed(t, t + dt0);
    let mut dt = dt0;
    if qmax > 0.0 {
        dt = dt.min(tank.courant * kernel.0.window_height / (vmax + qmax));
    }
    tank.land_at = None;
    if let Some(b) = tank.op.next_change(t)
        && b <= t + dt
    {
        dt = b - t;
        tank.land_at = Some(b);
    }
    if dt < dt0 {
        clock.dt = dt;
        clock.at_record = false;
    }
    times.add("limit_step", t0);
}

/// Move every parcel, the resting bed included, with the bulk velocity at
/// its height (evaluated mid-step: exact for a ramp).
pub fn bulk_transport(
    clock: Res<Clock>,
    tank: Res<Tank>,
    mut times: ResMut<StageTimes>,
    mut q: Query<&mut Position>,
) {
    let t0 = Instant::now();
    let dt = clock.dt;
    let p = tank.op.at(clock.time + 0.5 * dt);
    let (down, up) = (p.underflow_velocity() * dt, p.overflow_velocity() * dt);
    let zf = tank.op.feed_level;
    for mut pos in q
        .contiguous_iter_mut()
        .expect("parcel components are stored in tables")
    {
        pos.bypass_change_detection().par_iter_mut().for_each(|p| {
            // Same rule as `Operation::bulk_velocity`: the feed level belongs above.
            if p.0[2] < zf {
                p.0[2] -= down;
            } else {
                p.0[2] += up;
            }
        });
    }
    times.add("bulk_transport", t0);
}

/// Book the parcels that crossed the floor or the lip during this step and
/// turn them into outlet parcels; despawn outlet parcels one kernel window
/// beyond the outlets; release bed parcels carried above the feed level.
pub fn outlets(world: &mut World) {
    let t0 = Instant::now();
    let (top, zf) = {
        let t = world.resource::<Tank>();
        (t.top, t.op.feed_level)
    };
    let reach = world.resource::<KernelRes>().0.window_height;
    let mut left = std::mem::take(&mut world.resource_mut::<Tank>().left);
    let mut crossed: Vec<(u32, usize, f64, bool)> = Vec::new();
    let mut gone: Vec<(u32, Entity)> = Vec::new();
    let mut bed_loss = 0.0;
    let mut q = world.query::<(Entity, &Position, &Parcel, &mut Resting)>();
    for (e, p, parcel, mut rest) in q.iter_mut(world) {
        let z = p.0[2];
        let id = parcel.id as usize;
        if left[id] {
            if z < -reach || z > top + reach {
                gone.push((parcel.id, e));
            }
            continue;
        }
        if z < 0.0 || z > top {
            crossed.push((parcel.id, parcel.class as usize, parcel.volume, z < 0.0));
            left[id] = true;
            if rest.0 {
                bed_loss += parcel.volume;
            }
            // From now on it moves with the bulk flow only (see `bulk_transport`).
            rest.0 = true;
        } else if rest.0 && z >= zf {
            rest.0 = false;
            bed_loss += parcel.volume;
        }
    }
    // Id order: a fixed booking and despawn order whatever the table order.
    crossed.sort_by_key(|g| g.0);
    gone.sort_by_key(|g| g.0);
    {
        let mut tank = world.resource_mut::<Tank>();
        tank.left = left;
        for &(_, c, v, under) in &crossed {
            if under {
                tank.step_underflow[c] += v;
            } else {
                tank.step_overflow[c] += v;
            }
        }
    }
    if bed_loss > 0.0 {
        let mut bed = world.resource_mut::<Bed>();
        bed.volume = (bed.volume - bed_loss).max(0.0);
    }
    for &(_, e) in &gone {
        world.despawn(e);
    }
    world.resource_mut::<StageTimes>().add("outlets", t0);
}

/// Inject the feed of this step, book the step in the ledger and add it to
/// the interval the next record reports on.
pub fn inject_feed(world: &mut World) {
    let t0 = Instant::now();
    let (time, dt) = {
        let c = world.resource::<Clock>();
        (c.time, c.dt)
    };
    let mut batch = Vec::new();
    {
        let mut tank = world.resource_mut::<Tank>();
        let tank = &mut *tank;
        let nc = tank.parcel_volume.len();
        let (owed, qu, qe) = over_step(&tank.op, time, dt);
        let mut fed = vec![0.0; nc];
        for c in 0..nc {
            let v = tank.parcel_volume[c];
            tank.carry[c] += owed[c];
            if v <= 0.0 {
                continue;
            }
            while tank.carry[c] >= v {
                tank.carry[c] -= v;
                fed[c] += v;
                let id = tank.next_id;
                tank.next_id += 1;
                tank.left.push(false);
                let stream = random::stream(id, random::Purpose::Seeding);
                let (x, y) = tank.section.sample(
                    random::uniform(tank.seed, stream, 1),
                    random::uniform(tank.seed, stream, 2),
                );
                batch.push((
                    Position([x, y, tank.op.feed_level]),
                    SettlingVelocity(0.0),
                    Parcel {
                        id,
                        class: c as u16,
                        volume: v,
                    },
                    LocalMix::default(),
                    Slip::default(),
                    TargetVelocity::default(),
                    Resting(false),
                    Consolidation::default(),
                ));
            }
        }
        let (under, over) = (
            std::mem::replace(&mut tank.step_underflow, vec![0.0; nc]),
            std::mem::replace(&mut tank.step_overflow, vec![0.0; nc]),
        );
        tank.ledger.add(&fed, &under, &over);
        for c in 0..nc {
            tank.interval_underflow[c] += under[c];
            tank.interval_overflow[c] += over[c];
        }
        tank.interval_underflow_flow += qu;
        tank.interval_overflow_flow += qe;
    }
    if !batch.is_empty() {
        world.spawn_batch(batch);
    }
    world.resource_mut::<StageTimes>().add("inject_feed", t0);
}

/// End a step that was cut to a schedule breakpoint exactly on it.
pub fn land_on_change(mut clock: ResMut<Clock>, mut tank: ResMut<Tank>) {
    if let Some(b) = tank.land_at.take()
        && !clock.at_record
    {
        clock.time = b;
    }
}

/// After a frame is recorded, the matching outlet sample: inventory, outlet
/// concentrations over the interval since the previous record, blanket level.
pub fn sample_outlets(world: &mut World) {
    let (nframes, nsamples) = (
        world.resource::<Recorder>().frames.len(),
        world.resource::<Tank>().samples.len(),
    );
    if nframes <= nsamples {
        return;
    }
    let t0 = Instant::now();
    let left = std::mem::take(&mut world.resource_mut::<Tank>().left);
    let nc = world.resource::<Tank>().parcel_volume.len();
    let mut inventory = vec![0.0; nc];
    let mut q = world.query::<&Parcel>();
    for parcel in q.iter(world) {
        if !left[parcel.id as usize] {
            inventory[parcel.class as usize] += parcel.volume;
        }
    }
    world.resource_mut::<Tank>().left = left;
    let (time, blanket_profile, z) = {
        let rec = world.resource::<Recorder>();
        let frame = rec.frames.last().expect("a frame was just recorded");
        (
            frame.time,
            frame.phi_total(rec.layout.nz()),
            rec.layout.z.clone(),
        )
    };
    let mut tank = world.resource_mut::<Tank>();
    let tank = &mut *tank;
    let per = |v: &[f64], flow: f64| -> Vec<f64> {
        v.iter()
            .map(|x| if flow > 0.0 { x / flow } else { 0.0 })
            .collect()
    };
    let under_phi = per(&tank.interval_underflow, tank.interval_underflow_flow);
    let over_phi = per(&tank.interval_overflow, tank.interval_overflow_flow);
    let blanket = blanket_level(&blanket_profile, &z, tank.op.blanket_threshold, tank.top);
    let sample = tank
        .ledger
        .sample(&tank.op, time, &inventory, &under_phi, &over_phi, blanket);
    tank.samples.push(sample);
    tank.interval_underflow.iter_mut().for_each(|v| *v = 0.0);
    tank.interval_overflow.iter_mut().for_each(|v| *v = 0.0);
    tank.interval_underflow_flow = 0.0;
    tank.interval_overflow_flow = 0.0;
    world.resource_mut::<StageTimes>().add("sample_outlets", t0);
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::path::Path;

    /// An invented tank (not the shared example, whose numbers may change).
    const EXAMPLE: &str = r#"format: 1
title: invented tank for unit tests
fluid:
  water: { temperature: "15 °C" }
solids:
  - name: invented flocs
    density: "1450 kg/m³"
    size: { single: "100 µm" }
vessel:
  thickener:
    height: "4.0 m"
    feed_level: "2.5 m"
    cross_section: { round: { diameter: "20 m" } }
operation:
  feed_flow:
    ramp: { from: "600 m³/h", to: "800 m³/h", start: "4 h", end: "6 h" }
  feed_solids: "3.0 g/L"
  underflow: { flow: "300 m³/h" }
models:
  hindered:
    vesilind: { v0: "8 m/h", k: "0.5 L/g" }
  max_packing: 0.6
run:
  end_time: "12 h"
  output_interval: "10 min"
  parcels: 20000
  engine: particles
output:
  file: out/unit.h5
  height_bins: 40
"#;

    #[test]
    fn an_empty_tank_gets_the_parcel_volume_of_its_feed() {
        let setup = crate::scenario::parse_str(EXAMPLE, Path::new("t.yaml")).unwrap();
        let op = setup.thickener.as_ref().unwrap();
        assert_eq!(initial_counts(&setup, op), vec![0]);
        // One class: v = φ_f A H / N with φ_f = 3 g/L over 1450 kg/m³, A = π 10² m²,
        // H = 4 m, N = 20 000 (exact arithmetic).
        let expect = 3.0 / 1450.0 * std::f64::consts::PI * 100.0 * 4.0 / 20_000.0;
        let v = parcel_volumes(&setup, op);
        assert!((v[0] - expect).abs() < 1e-15 * expect, "{v:?}");
    }

    #[test]
    fn feed_over_a_step_of_the_ramp_is_exact() {
        // The tank ramps Q_f from 600 to 800 m³/h over 4–6 h at φ_f = 3/1450
        // with Q_u = 300 m³/h: over [4.5 h, 4.5 h + 600 s] the mean feed is the
        // ramp's value at mid-step, 600 + 200·(4.5 + 1/12 − 4)/2 m³/h (linear).
        let setup = crate::scenario::parse_str(EXAMPLE, Path::new("t.yaml")).unwrap();
        let op = setup.thickener.as_ref().unwrap();
        let (t, dt) = (4.5 * 3600.0, 600.0);
        let (fed, qu, qe) = over_step(op, t, dt);
        let q_mid = (600.0 + 200.0 * (4.5 + 1.0 / 12.0 - 4.0) / 2.0) / 3600.0;
        let phi = 3.0 / 1450.0;
        assert!((fed[0] - q_mid * phi * dt).abs() < 1e-13 * fed[0]);
        assert!((qu - 300.0 / 3600.0 * dt).abs() < 1e-12 * qu);
        assert!((qe - (q_mid - 300.0 / 3600.0) * dt).abs() < 1e-12 * qe);
    }
}
