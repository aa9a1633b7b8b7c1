//! The particle engine: parcels in an ECS world, each standing for many real
//! particles of one size class, settling with hindered velocities from the
//! local concentration around them.
//!
//! See [`pipeline`] for the systems run each step, in order.

pub mod geometry;
pub mod kernel;
pub mod neighbours;
pub mod pipeline;
pub mod random;
pub mod state;
pub mod thickener;

use crate::physics::compression::PowerLawStress;
use crate::record::{RecordLayout, RunRecord, RunStatus};
use crate::scenario::Setup;
use bevy_ecs::prelude::*;
use bevy_ecs::schedule::{ScheduleLabel, SingleThreadedExecutor};
use geometry::Section;
use kernel::Kernel;
use neighbours::NeighbourSearch;
use pipeline::*;
use std::sync::Arc;
use std::sync::atomic::AtomicBool;

#[derive(ScheduleLabel, Debug, Clone, PartialEq, Eq, Hash)]
struct Step;

/// Why the engine could not start.
#[derive(Debug, thiserror::Error)]
pub enum EngineError {
    #[error("cannot start a pool of {threads} threads: {reason}")]
    Threads { threads: usize, reason: String },
    /// The scenario asks for something this engine does not model yet.
    #[error("{0}")]
    Unsupported(String),
}

/// Progress reports from a running engine.
pub trait Monitor {
    /// Called after every step with the simulated time and the work done.
    fn step(&mut self, time: f64, end: f64, parcel_steps: u64);
}

/// A monitor that ignores progress.
pub struct Silent;
impl Monitor for Silent {
    fn step(&mut self, _: f64, _: f64, _: u64) {}
}

/// One parcel as seen from outside the engine (settling velocities positive down).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ParcelState {
    pub id: u32,
    pub class: usize,
    /// Solids volume represented, m³.
    pub volume: f64,
    /// x, y across the section from its centre, z up from the floor, m.
    pub position: [f64; 3],
    pub velocity: f64,
    pub target_velocity: f64,
    pub local_volume_fraction: f64,
    pub resting: bool,
}

/// A run of the particle engine: a batch column or a continuous thickener.
pub struct ParticleEngine {
    world: World,
    schedule: Schedule,
    pool: rayon::ThreadPool,
    scenario_yaml: String,
    title: String,
    seed: u64,
    parcels: u64,
}

/// How many parcels each class gets: proportional to its volume share, at
/// least one, by largest remainders (so the total is exact).
pub fn parcels_per_class(shares: &[f64], total: u64) -> Vec<u64> {
    let n = shares.len() as u64;
    let spare = total.saturating_sub(n) as f64;
    let raw: Vec<f64> = shares.iter().map(|s| s * spare).collect();
    let mut counts: Vec<u64> = raw.iter().map(|r| 1 + r.floor() as u64).collect();
    let mut left = total.saturating_sub(counts.iter().sum());
    let mut order: Vec<usize> = (0..shares.len()).collect();
    order.sort_by(|&a, &b| {
        (raw[b] - raw[b].floor())
            .total_cmp(&(raw[a] - raw[a].floor()))
            .then(a.cmp(&b))
    });
    for &i in order.iter().cycle() {
        if left == 0 {
            break;
        }
        counts[i] += 1;
        left -= 1;
    }
    counts
}

impl ParticleEngine {
    /// Build the world for `setup`; `threads` sizes the pool for the hot loops.
    ///
    /// Refuses (`EngineError::Unsupported`) bed compression together with
    /// several size classes, which this engine does not model.
    pub fn new(setup: &Setup, scenario_yaml: &str, threads: usize) -> Result<Self, EngineError> {
        if setup.compression.is_some() && setup.classes.len() > 1 {
            return Err(EngineError::Unsupported(
                "the particle engine models bed compression for one size class only \
                 (`models.compression` with several classes); remove it, or describe the \
                 solids by one size"
                    .to_string(),
            ));
        }
        if setup.thickener.is_some() && setup.compression.is_some() {
            // Not validated together: the outlet parcels below the floor and
            // the bed moving with the underflow change what compression sees.
            return Err(EngineError::Unsupported(
                "the particle engine does not run a thickener with bed compression yet; \
                 remove `models.compression`, or run the scenario with `run: { engine: continuum }`"
                    .to_string(),
            ));
        }
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(threads.max(1))
            .build()
            .map_err(|e| EngineError::Threads {
                threads,
                reason: e.to_string(),
            })?;
        let section = Section::of_column(&setup.column);
        let top = setup.column.height;
        let area = section.area();
        let phi0 = setup.initial_volume_fraction;
        let seed = setup.run.seed;

        let mut world = World::new();
        // Parcels: stratified in height within each class, uniform across.
        let shares: Vec<f64> = setup.classes.iter().map(|c| c.volume_share).collect();
        let counts = match &setup.thickener {
            None => parcels_per_class(&shares, setup.run.parcels),
            Some(op) => thickener::initial_counts(setup, op),
        };
        let mut id: u32 = 0;
        let mut batch = Vec::with_capacity(setup.run.parcels as usize);
        for (c, (&n, class)) in counts.iter().zip(&setup.classes).enumerate() {
            let volume = class.volume_share * phi0 * area * top / n as f64;
            for k in 0..n {
                let stream = random::stream(id, random::Purpose::Seeding);
                let z = top * (k as f64 + random::uniform(seed, stream, 0)) / n as f64;
                let (x, y) = section.sample(
                    random::uniform(seed, stream, 1),
                    random::uniform(seed, stream, 2),
                );
                batch.push((
                    Position([x, y, z]),
                    SettlingVelocity(0.0),
                    Parcel {
                        id,
                        class: c as u16,
                        volume,
                    },
                    LocalMix::default(),
                    Slip::default(),
                    TargetVelocity::default(),
                    Resting(false),
                    Consolidation::default(),
                ));
                id += 1;
            }
        }
        world.spawn_batch(batch);
        if let Some(op) = &setup.thickener {
            let mut inventory = vec![0.0; counts.len()];
            for p in world.query::<&Parcel>().iter(&world) {
                inventory[p.class as usize] += p.volume;
            }
            world.insert_resource(thickener::Tank::new(setup, op, inventory, id));
        }

        let kernel = Kernel::for_neighbours(
            &section,
            top,
            setup.run.parcels,
            setup.numerics.neighbours,
            setup.numerics.kernel_aspect,
        );
        let nz = setup.output.height_bins;
        let z_edges: Vec<f64> = (0..=nz).map(|k| top * k as f64 / nz as f64).collect();
        let layout = RecordLayout {
            z: (0..nz)
                .map(|k| top * (k as f64 + 0.5) / nz as f64)
                .collect(),
            z_edges,
            class_diameter: setup.classes.iter().map(|c| c.diameter).collect(),
            class_lower: setup.classes.iter().map(|c| c.lower).collect(),
            class_upper: setup.classes.iter().map(|c| c.upper).collect(),
            class_species: setup.classes.iter().map(|c| c.species).collect(),
            species_name: setup.species.iter().map(|s| s.name.clone()).collect(),
            species_density: setup.species.iter().map(|s| s.density).collect(),
            class_terminal_velocity: setup.classes.iter().map(|c| c.terminal.velocity).collect(),
            area,
        };
        world.insert_resource(ClassTable {
            terminal_velocity: setup.classes.iter().map(|c| c.terminal.velocity).collect(),
            relaxation_time: setup.classes.iter().map(|c| c.relaxation_time).collect(),
            density_excess: setup
                .classes
                .iter()
                .map(|c| setup.species[c.species].density - setup.fluid.density)
                .collect(),
            law: setup
                .classes
                .iter()
                .map(|c| setup.hindered_law(c))
                .collect(),
            max_packing: setup.max_packing,
        });
        world.insert_resource(Vessel {
            section,
            top,
            courant: setup.numerics.courant,
            dispersion: setup.numerics.dispersion,
            seed,
        });
        world.insert_resource(Search(NeighbourSearch::new(
            setup.numerics.search,
            kernel.radius,
            kernel.window_height,
        )));
        world.insert_resource(KernelRes(kernel));
        world.insert_resource(Clock {
            time: 0.0,
            dt: 0.0,
            step: 0,
            end: setup.run.end_time,
            record_interval: setup.run.output_interval,
            next_record: 1,
            at_record: false,
        });
        if let Some(c) = setup.compression {
            let class = &setup.classes[0];
            world.insert_resource(Network {
                stress: PowerLawStress {
                    yield_stress: c.yield_stress,
                    gel_point: c.gel_point,
                    exponent: c.exponent,
                },
                weight: (setup.species[class.species].density - setup.fluid.density)
                    * setup.gravity,
            });
        }
        world.insert_resource(Bed {
            volume: 0.0,
            area,
            max_packing: setup.max_packing,
            gel_point: setup.compression.map(|c| c.gel_point),
        });
        world.insert_resource(StageTimes::default());
        world.insert_resource(Recorder {
            layout,
            frames: Vec::new(),
            initial_volume_fraction: phi0,
        });

        let mut schedule = Schedule::new(Step);
        schedule.set_executor(SingleThreadedExecutor::new());
        schedule.add_systems(
            (
                index_parcels,
                sample_concentration,
                slip_velocities,
                mixture_correction,
                network_stress,
                choose_time_step,
                integrate,
                walls_floor_packing,
                advance_clock,
                record,
            )
                .chain(),
        );
        if setup.thickener.is_some() {
            // The suspension continues beyond the outlets (outlet parcels):
            // the kernel is not cut at the floor and the lip.
            let k = &mut world.resource_mut::<KernelRes>().0;
            k.top = f64::INFINITY;
            k.bottom = f64::NEG_INFINITY;
            use thickener::*;
            schedule.add_systems((
                limit_step.after(choose_time_step).before(integrate),
                bulk_transport.after(limit_step).before(integrate),
                outlets.after(integrate).before(walls_floor_packing),
                inject_feed.after(walls_floor_packing).before(advance_clock),
                land_on_change.after(advance_clock).before(record),
                sample_outlets.after(record),
            ));
        }
        let mut engine = ParticleEngine {
            world,
            schedule,
            pool,
            scenario_yaml: scenario_yaml.to_string(),
            title: setup.title.clone(),
            seed,
            parcels: setup.run.parcels,
        };
        engine.record_initial_frame();
        Ok(engine)
    }

    fn record_initial_frame(&mut self) {
        let mut state = self.world.query::<(&Position, &Parcel)>();
        let frame = {
            let q = state.query(&self.world);
            let rec = self.world.resource::<Recorder>();
            let bed = self.world.resource::<Bed>();
            take_frame(0.0, rec, bed, &q)
        };
        self.world.resource_mut::<Recorder>().frames.push(frame);
        if self.world.contains_resource::<thickener::Tank>() {
            thickener::sample_outlets(&mut self.world);
        }
    }

    /// Simulated time, s.
    pub fn time(&self) -> f64 {
        self.world.resource::<Clock>().time
    }

    pub fn finished(&self) -> bool {
        self.world.resource::<Clock>().finished()
    }

    /// One step of the pipeline.
    pub fn step(&mut self) {
        let (world, schedule) = (&mut self.world, &mut self.schedule);
        self.pool.install(|| schedule.run(world));
    }

    /// Run to the end time, or until `stop` is raised (then the record is partial).
    pub fn run(&mut self, monitor: &mut dyn Monitor, stop: Option<&Arc<AtomicBool>>) -> RunRecord {
        crate::engine::run(self, monitor, stop, None)
    }

    /// The record so far.
    pub fn record(&self, status: RunStatus) -> RunRecord {
        let rec = self.world.resource::<Recorder>();
        RunRecord {
            layout: rec.layout.clone(),
            frames: rec.frames.clone(),
            status,
            scenario_yaml: self.scenario_yaml.clone(),
            title: self.title.clone(),
            seed: self.seed,
            engine: "particle".to_string(),
            resolution: self.parcels,
            outlets: self
                .world
                .get_resource::<thickener::Tank>()
                .map(thickener::Tank::series),
        }
    }

    /// The state of every parcel, in a fixed order (for tests and diagnostics).
    pub fn parcel_states(&mut self) -> Vec<ParcelState> {
        let mut q = self.world.query::<(
            &Position,
            &SettlingVelocity,
            &TargetVelocity,
            &Parcel,
            &LocalMix,
            &Resting,
        )>();
        let mut out: Vec<ParcelState> = q
            .iter(&self.world)
            .map(|(p, v, t, parcel, mix, r)| ParcelState {
                id: parcel.id,
                class: parcel.class as usize,
                volume: parcel.volume,
                position: p.0,
                velocity: v.0,
                target_velocity: t.0,
                local_volume_fraction: mix.phi,
                resting: r.0,
            })
            .collect();
        out.sort_by_key(|s| s.id);
        out
    }

    /// Parcel ids in the order the ECS table holds them (the order in which
    /// sums over parcels run; see [`state`]).
    pub fn parcel_ids_in_table_order(&mut self) -> Vec<u32> {
        let mut q = self.world.query::<&Parcel>();
        q.iter(&self.world).map(|p| p.id).collect()
    }

    /// Wall time per pipeline stage and parcel updates so far.
    pub fn stage_times(&self) -> &StageTimes {
        self.world.resource::<StageTimes>()
    }

    /// Kernel radius across and window height along gravity, m.
    pub fn kernel_size(&self) -> (f64, f64) {
        let k = &self.world.resource::<KernelRes>().0;
        (k.radius, k.window_height)
    }

    /// Bytes of parcel state per parcel: components plus the search copy.
    pub fn bytes_per_parcel() -> usize {
        use std::mem::size_of;
        size_of::<Position>()
            + size_of::<SettlingVelocity>()
            + size_of::<Parcel>()
            + size_of::<LocalMix>()
            + size_of::<Slip>()
            + size_of::<TargetVelocity>()
            + size_of::<Resting>()
            + size_of::<Consolidation>()
            // search copy: scaled position, class, volume, cell, order
            + 24 + 2 + 8 + 4 + 4
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parcel_counts_follow_volume_shares_exactly() {
        let c = parcels_per_class(&[0.5, 0.3, 0.2], 1000);
        assert_eq!(c.iter().sum::<u64>(), 1000);
        // 997 spare parcels: raw 498.5, 299.1, 199.4 → 1 + floor = 499, 300, 200;
        // the one left goes to the largest remainder (0.5, class 0).
        assert_eq!(c, vec![500, 300, 200]);
        // Every class gets a parcel, even a tiny one.
        let c = parcels_per_class(&[0.999, 0.001], 10);
        assert_eq!(c.iter().sum::<u64>(), 10);
        assert!(c[1] >= 1);
    }
}
