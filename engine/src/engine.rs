//! What every engine offers a driver: stepping, the record so far and
//! checkpoints; and the one run loop they share.
//!
//! A new engine implements [`Engine`]; `turbid run` then drives it through
//! [`run`] without knowing which engine it is.
//!
//! # What goes into a checkpoint
//!
//! Everything that evolves during a run and that a later step or record
//! reads: positions and velocities, clocks and step counters (the random
//! streams are counter-based, `random::stream(parcel, purpose)` with the step
//! as counter, so their state is the step number), the frames recorded so
//! far and the index of the next record, ledgers and carries, and — for the
//! particle engine — the *order* of the parcels in the ECS table, because
//! sums over parcels (the recorded slabs, the neighbour cells' tie order, the
//! thickener inventory) run in that order and floating-point addition is not
//! associative. What the scenario fixes (laws, the kernel, the vessel, the
//! schedules) is rebuilt from the scenario, whose hash the checkpoint
//! carries. Work buffers that every step overwrites before reading are left
//! out.

use crate::checkpoint::{CheckpointError, Reader, Writer, fnv1a};
pub use crate::particles::Monitor;
use crate::record::{RunRecord, RunStatus};
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};

/// A run of one engine, stepped by a driver.
pub trait Engine {
    /// `particle` or `continuum` (as recorded in the result file).
    fn name(&self) -> &'static str;
    /// Simulated time, s.
    fn time(&self) -> f64;
    /// End time of the run, s.
    fn end_time(&self) -> f64;
    /// One step (a no-op once finished).
    fn step(&mut self);
    fn finished(&self) -> bool {
        self.time() >= self.end_time()
    }
    /// The record so far.
    fn record(&self, status: RunStatus) -> RunRecord;
    /// Frames recorded so far (the initial one included).
    fn frames_recorded(&self) -> usize;
    /// Work done so far for progress reports: parcel or cell updates.
    fn work_done(&self) -> u64;
    /// The scenario text the engine was built from.
    fn scenario_text(&self) -> &str;
    /// Append the evolving state (module docs) to `w`.
    fn save_state(&mut self, w: &mut Writer);
    /// Replace the evolving state by what [`save_state`](Self::save_state)
    /// wrote. On an error the engine is left in an unspecified state and
    /// must be dropped.
    fn restore_state(&mut self, r: &mut Reader) -> Result<(), CheckpointError>;

    /// The checkpoint file's bytes: header (with the scenario hash and a
    /// checksum) and state.
    fn checkpoint(&mut self) -> Vec<u8> {
        let mut w = Writer::new();
        self.save_state(&mut w);
        w.finish(self.name(), fnv1a(self.scenario_text().as_bytes()))
    }

    /// Continue from a checkpoint written by an engine built from the same
    /// scenario text; refuses one from another scenario or engine, or a
    /// damaged one.
    fn restore(&mut self, bytes: &[u8]) -> Result<(), CheckpointError> {
        let hash = fnv1a(self.scenario_text().as_bytes());
        let mut r = Reader::open(bytes, self.name(), hash)?;
        self.restore_state(&mut r)?;
        r.finish()
    }
}

/// Periodic checkpoints during a run (the driver decides when and where).
pub trait Checkpoints {
    /// Whether a checkpoint is due now (asked after every step).
    fn due(&mut self) -> bool;
    /// Write one.
    fn save(&mut self, engine: &mut dyn Engine);
}

/// Run to the end time, or until `stop` is raised (then the record is
/// partial and the engine can still be checkpointed by the caller), saving
/// checkpoints whenever `checkpoints` says one is due.
pub fn run(
    engine: &mut dyn Engine,
    monitor: &mut dyn Monitor,
    stop: Option<&Arc<AtomicBool>>,
    mut checkpoints: Option<&mut dyn Checkpoints>,
) -> RunRecord {
    let mut status = RunStatus::Complete;
    while !engine.finished() {
        if stop.is_some_and(|s| s.load(Ordering::Relaxed)) {
            status = RunStatus::Partial;
            break;
        }
        engine.step();
        monitor.step(engine.time(), engine.end_time(), engine.work_done());
        if let Some(c) = checkpoints.as_deref_mut()
            && !engine.finished()
            && c.due()
        {
            c.save(engine);
        }
    }
    engine.record(status)
}
