//! The particle engine as an [`Engine`]: stepping, records and checkpoints.
//!
//! A checkpoint holds the clock, the bed, the frames so far, the work
//! counter, the thickener's tank (carries, ledger, next id, outlet flags and
//! samples) and every parcel's components **in table order**. The table
//! order matters: the recorded slabs and the inventory are sums over the
//! parcels in that order, and the cell list keeps it among parcels of one
//! cell. In a batch column it is the id order, but a thickener despawns
//! parcels that left (a swap-remove moves the last row into the hole), so
//! there it is a permutation that only the run's history determines. The
//! restore respawns the parcels into an empty table in the saved order and
//! checks that the world iterates them in exactly that order.

use super::ParticleEngine;
use super::pipeline::*;
use super::thickener::Tank;
use crate::checkpoint::{CheckpointError, Reader, Writer};
use crate::engine::Engine;
use crate::record::{RunRecord, RunStatus};
use bevy_ecs::prelude::*;

/// The components of a parcel, as spawned and as checkpointed. Adding a
/// component to parcels means adding it here, to both spawn sites
/// (`ParticleEngine::new`, `thickener::inject_feed`) and to
/// [`save_parcel`]/[`load_parcel`]; a unit test fails when a parcel carries a
/// component this tuple does not list.
pub type ParcelComponents = (
    Position,
    SettlingVelocity,
    Parcel,
    LocalMix,
    Slip,
    TargetVelocity,
    Resting,
    Consolidation,
);

/// Number of components in [`ParcelComponents`].
pub const PARCEL_COMPONENTS: usize = 8;

type ParcelRefs<'a> = (
    &'a Position,
    &'a SettlingVelocity,
    &'a Parcel,
    &'a LocalMix,
    &'a Slip,
    &'a TargetVelocity,
    &'a Resting,
    &'a Consolidation,
);

fn save_parcel(w: &mut Writer, (p, v, parcel, mix, slip, target, rest, cons): ParcelRefs) {
    for x in p.0 {
        w.f64(x);
    }
    w.f64(v.0);
    w.u32(parcel.id);
    w.u16(parcel.class);
    w.f64(parcel.volume);
    w.f64(mix.phi);
    w.f64(mix.mixture_excess);
    w.f64(mix.return_flow);
    w.f64(mix.phi_behind);
    w.f64(slip.0);
    w.f64(target.0);
    w.bool(rest.0);
    w.f64(cons.factor);
    w.f64(cons.rate);
}

/// Bytes of one parcel in a checkpoint.
const PARCEL_BYTES: usize = 3 * 8 + 8 + 4 + 2 + 8 + 4 * 8 + 8 + 8 + 1 + 2 * 8;

fn load_parcel(r: &mut Reader) -> Result<ParcelComponents, CheckpointError> {
    Ok((
        Position([r.f64()?, r.f64()?, r.f64()?]),
        SettlingVelocity(r.f64()?),
        Parcel {
            id: r.u32()?,
            class: r.u16()?,
            volume: r.f64()?,
        },
        LocalMix {
            phi: r.f64()?,
            mixture_excess: r.f64()?,
            return_flow: r.f64()?,
            phi_behind: r.f64()?,
        },
        Slip(r.f64()?),
        TargetVelocity(r.f64()?),
        Resting(r.bool()?),
        Consolidation {
            factor: r.f64()?,
            rate: r.f64()?,
        },
    ))
}

impl Engine for ParticleEngine {
    fn name(&self) -> &'static str {
        "particle"
    }
    fn time(&self) -> f64 {
        ParticleEngine::time(self)
    }
    fn end_time(&self) -> f64 {
        self.world.resource::<Clock>().end
    }
    fn step(&mut self) {
        if !self.finished() {
            ParticleEngine::step(self)
        }
    }
    fn finished(&self) -> bool {
        ParticleEngine::finished(self)
    }
    fn record(&self, status: RunStatus) -> RunRecord {
        ParticleEngine::record(self, status)
    }
    fn frames_recorded(&self) -> usize {
        self.world.resource::<Recorder>().frames.len()
    }
    fn work_done(&self) -> u64 {
        self.stage_times().parcel_steps
    }
    fn scenario_text(&self) -> &str {
        &self.scenario_yaml
    }

    fn save_state(&mut self, w: &mut Writer) {
        let c = self.world.resource::<Clock>();
        w.f64(c.time);
        w.f64(c.dt);
        w.u64(c.step);
        w.u64(c.next_record);
        w.bool(c.at_record);
        w.f64(self.world.resource::<Bed>().volume);
        w.u64(self.world.resource::<StageTimes>().parcel_steps);
        w.frames(&self.world.resource::<Recorder>().frames);
        let mut q = self.world.query::<ParcelRefs>();
        w.len(q.iter(&self.world).len());
        for parcel in q.iter(&self.world) {
            save_parcel(w, parcel);
        }
        match self.world.get_resource::<Tank>() {
            Some(t) => {
                w.bool(true);
                t.save(w);
            }
            None => w.bool(false),
        }
    }

    fn restore_state(&mut self, r: &mut Reader) -> Result<(), CheckpointError> {
        let world = &mut self.world;
        {
            let mut c = world.resource_mut::<Clock>();
            c.time = r.f64()?;
            c.dt = r.f64()?;
            c.step = r.u64()?;
            c.next_record = r.u64()?;
            c.at_record = r.bool()?;
        }
        world.resource_mut::<Bed>().volume = r.f64()?;
        world.resource_mut::<StageTimes>().parcel_steps = r.u64()?;
        let frames = r.frames()?;
        let (nz, nc) = {
            let l = &world.resource::<Recorder>().layout;
            (l.nz(), l.nclasses())
        };
        if frames.iter().any(|f| f.phi_class.len() != nz * nc) {
            return Err(CheckpointError::Mismatch(
                "its frames have another number of height bins or classes".into(),
            ));
        }
        world.resource_mut::<Recorder>().frames = frames;
        let n = r.len(PARCEL_BYTES)?;
        let mut parcels = Vec::with_capacity(n);
        for _ in 0..n {
            let p = load_parcel(r)?;
            if p.2.class as usize >= nc {
                return Err(CheckpointError::Mismatch(format!(
                    "parcel {} is of class {}, the scenario has {nc} classes",
                    p.2.id, p.2.class
                )));
            }
            parcels.push(p);
        }
        let ids: Vec<u32> = parcels.iter().map(|p| p.2.id).collect();
        // An empty table, then the parcels appended in the saved order.
        let old: Vec<Entity> = world
            .query_filtered::<Entity, With<Parcel>>()
            .iter(world)
            .collect();
        for e in old {
            world.despawn(e);
        }
        world.spawn_batch(parcels);
        let order: Vec<u32> = world.query::<&Parcel>().iter(world).map(|p| p.id).collect();
        if order != ids {
            return Err(CheckpointError::Mismatch(
                "the parcels could not be restored in their table order".into(),
            ));
        }
        let has_tank = r.bool()?;
        match (has_tank, world.get_resource_mut::<Tank>()) {
            (true, Some(mut t)) => t.restore(r, &ids)?,
            (false, None) => {}
            _ => {
                return Err(CheckpointError::Mismatch(
                    "thickener state in a batch run or the reverse".into(),
                ));
            }
        }
        Ok(())
    }
}

/// The resources of a particle run and how a checkpoint treats them: every
/// resource is either saved (its evolving fields) or rebuilt from the
/// scenario. A unit test fails when the world holds a resource this list
/// does not name, so a new one cannot be forgotten.
pub const RESOURCES: [(&str, &str); 11] = [
    (
        "Clock",
        "saved: time, dt, step, next record, at-record flag",
    ),
    (
        "Bed",
        "saved: volume (area, packing and gel point from the scenario)",
    ),
    (
        "StageTimes",
        "saved: parcel updates (wall times are not state)",
    ),
    ("Recorder", "saved: frames (layout from the scenario)"),
    (
        "Tank",
        "saved: carries, ledger, next id, outlet flags, intervals, samples",
    ),
    ("ClassTable", "from the scenario"),
    ("Vessel", "from the scenario"),
    ("Network", "from the scenario (bed compression only)"),
    (
        "KernelRes",
        "from the scenario (opened at the outlets for a thickener)",
    ),
    (
        "Search",
        "rebuilt from the parcels at the start of every step",
    ),
    ("(bevy internals)", "none of ours"),
];

#[cfg(test)]
mod tests {
    use super::*;

    const TANK: &str = r#"format: 1
title: invented tank for unit tests
fluid:
  water: { temperature: "15 °C" }
solids:
  - name: invented flocs
    density: "1450 kg/m³"
    size: { single: "100 µm" }
vessel:
  thickener:
    height: "0.5 m"
    feed_level: "0.3 m"
    cross_section: { round: { diameter: "0.5 m" } }
initial:
  loading: "2 g/L"
operation:
  feed_flow: "0.4 m³/h"
  feed_solids: "3.0 g/L"
  underflow: { flow: "0.15 m³/h" }
models:
  hindered:
    vesilind: { v0: "8 m/h", k: "0.5 L/g" }
  max_packing: 0.6
run:
  end_time: "10 min"
  output_interval: "1 min"
  parcels: 500
  engine: particles
output:
  file: out/unit.h5
  height_bins: 20
"#;

    #[test]
    fn checkpoints_cover_every_component_and_resource_of_a_run() {
        // A thickener, so both spawn sites (the initial parcels and the feed)
        // have made parcels.
        let setup = crate::scenario::parse_str(TANK, std::path::Path::new("t.yaml")).unwrap();
        let mut engine = ParticleEngine::new(&setup, TANK, 1).unwrap();
        let first = engine.parcel_ids_in_table_order().len() as u32;
        while engine.time() < 120.0 {
            Engine::step(&mut engine);
        }
        let world = &mut engine.world;
        let mut q = world.query_filtered::<Entity, With<Parcel>>();
        let parcels: Vec<Entity> = q.iter(world).collect();
        let ids = engine.parcel_ids_in_table_order();
        assert!(ids.iter().any(|&i| i >= first), "no parcel was fed");
        let world = &engine.world;
        for e in parcels {
            // A parcel with a component the checkpoint does not save fails
            // here: add it to `ParcelComponents`, `save_parcel`, `load_parcel`.
            assert_eq!(
                world.entity(e).archetype().component_count(),
                PARCEL_COMPONENTS
            );
        }
        // A new resource fails here: save what evolves in it (`save_state`,
        // `restore_state`) and name it in `RESOURCES`.
        let known: Vec<_> = [
            world.component_id::<Clock>(),
            world.component_id::<Bed>(),
            world.component_id::<StageTimes>(),
            world.component_id::<Recorder>(),
            world.component_id::<Tank>(),
            world.component_id::<ClassTable>(),
            world.component_id::<Vessel>(),
            world.component_id::<Network>(),
            world.component_id::<KernelRes>(),
            world.component_id::<Search>(),
        ]
        .into_iter()
        .flatten()
        .collect();
        assert_eq!(
            known.len(),
            RESOURCES.len() - 1,
            "RESOURCES lists every type above"
        );
        let unknown = world
            .iter_resources()
            .filter(|(id, _, _)| !known.contains(id))
            .count();
        // What bevy itself keeps in a world that ran a schedule and despawned.
        let mut fresh = World::new();
        let mut schedule = Schedule::new(super::super::Step);
        schedule.set_executor(bevy_ecs::schedule::SingleThreadedExecutor::new());
        schedule.add_systems(|| {});
        schedule.run(&mut fresh);
        let e = fresh.spawn(Resting(false)).id();
        fresh.despawn(e);
        let internal = fresh.iter_resources().count();
        assert_eq!(unknown, internal, "a resource the checkpoint does not know");
    }

    #[test]
    fn checkpoints_list_every_parcel_component() {
        // Fails when a parcel gains a component the checkpoint does not save:
        // add it to `ParcelComponents`, `save_parcel` and `load_parcel`.
        let mut world = World::new();
        let e = world
            .spawn((
                Position([0.0; 3]),
                SettlingVelocity(0.0),
                Parcel {
                    id: 0,
                    class: 0,
                    volume: 1.0,
                },
                LocalMix::default(),
                Slip::default(),
                TargetVelocity::default(),
                Resting(false),
                Consolidation::default(),
            ))
            .id();
        let spawned = world.entity(e).archetype().component_count();
        assert_eq!(spawned, PARCEL_COMPONENTS);
        let mut w = Writer::new();
        let mut q = world.query::<ParcelRefs>();
        save_parcel(&mut w, q.single(&world).unwrap());
        let bytes = w.finish("particle", 0);
        let mut r = Reader::open(&bytes, "particle", 0).unwrap();
        let back = load_parcel(&mut r).unwrap();
        r.finish().unwrap();
        assert_eq!(back.2.volume, 1.0);
    }
}
