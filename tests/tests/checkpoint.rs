//! Checkpoint and restart in process: a run stopped after k steps,
//! checkpointed, restored into a freshly built engine and continued, records
//! exactly what the uninterrupted run records, bit for bit (the reference is
//! the uninterrupted run itself: restart must not change a single bit). And
//! checkpoints that do not belong to the run are refused.

use std::path::Path;
use turbid_engine::checkpoint::{CheckpointError, Writer};
use turbid_engine::continuum::ContinuumEngine;
use turbid_engine::engine::{self, Engine};
use turbid_engine::particles::{ParticleEngine, Silent};
use turbid_engine::record::{RunRecord, RunStatus};
use turbid_engine::scenario::{self, Setup};

/// Bidisperse batch column with dispersion (invented test case): the MLB
/// mixture terms and the random streams both matter.
const BATCH: &str = include_str!("../fixtures/four-class-column.yaml");

/// A small thickener that starts full, so parcels leave through both outlets
/// (and are despawned) before the checkpoint (invented test case).
const TANK: &str = include_str!("../fixtures/checkpoint-tank.yaml");

fn setup(text: &str) -> Setup {
    scenario::parse_str(text, Path::new("checkpoint.yaml")).unwrap()
}

/// Every recorded number as bytes of its bits (frames and outlet samples),
/// so that "equal" means bit for bit (−0 ≠ +0, NaN payloads count).
fn bits(r: &RunRecord) -> Vec<u8> {
    let mut w = Writer::new();
    w.frames(&r.frames);
    if let Some(o) = &r.outlets {
        w.samples(&o.samples);
    }
    w.finish("record", 0)
}

fn continue_from(engine: &mut dyn Engine, bytes: &[u8]) -> RunRecord {
    engine.restore(bytes).unwrap();
    engine::run(engine, &mut Silent, None, None)
}

/// Step past `t` (s) and return the checkpoint; the engine is then dropped.
fn checkpoint_after(engine: &mut dyn Engine, t: f64) -> Vec<u8> {
    let mut steps = 0;
    while engine.time() <= t {
        engine.step();
        steps += 1;
    }
    assert!(steps > 3, "too few steps before the checkpoint");
    assert!(!engine.finished(), "stopped too late for the test");
    engine.checkpoint()
}

fn assert_same(a: &RunRecord, b: &RunRecord, what: &str) {
    assert_eq!(a.status, RunStatus::Complete);
    assert_eq!(b.status, RunStatus::Complete);
    assert_eq!(a.frames.len(), b.frames.len(), "{what}: frame count");
    assert!(bits(a) == bits(b), "{what}: records differ after a restart");
}

#[test]
fn particle_batch_restarts_bit_for_bit() {
    let s = setup(BATCH);
    let mut whole = ParticleEngine::new(&s, BATCH, 2).unwrap();
    let reference = whole.run(&mut Silent, None);
    assert_eq!(reference.frames.len(), 9);
    // Stop mid-interval (not on a record) past 17 s, restart on 2
    // threads and on 1 (the state does not depend on the thread count).
    let bytes = checkpoint_after(&mut ParticleEngine::new(&s, BATCH, 2).unwrap(), 17.0);
    for threads in [2, 1] {
        let mut fresh = ParticleEngine::new(&s, BATCH, threads).unwrap();
        let again = continue_from(&mut fresh, &bytes);
        assert_same(&reference, &again, "particle batch");
        // The parcels themselves, not only what was recorded.
        assert_eq!(whole.parcel_states(), fresh.parcel_states());
    }
    // Not vacuous: the interface has fallen over the run.
    let first = reference.frames[0].interface_height;
    let last = reference.frames.last().unwrap().interface_height;
    assert!(last < 0.9 * first, "{first} → {last}");
}

#[test]
fn particle_thickener_restarts_bit_for_bit() {
    let s = setup(TANK);
    let mut whole = ParticleEngine::new(&s, TANK, 2).unwrap();
    let reference = whole.run(&mut Silent, None);
    // Checkpoint at 6.5 min: during the ramp's end, after parcels left
    // and were despawned, so the table is no longer in id order.
    let mut part = ParticleEngine::new(&s, TANK, 2).unwrap();
    while part.time() < 390.0 {
        Engine::step(&mut part);
    }
    let order = part.parcel_ids_in_table_order();
    let mut sorted = order.clone();
    sorted.sort_unstable();
    assert_ne!(
        order, sorted,
        "the table is still in id order: despawns not exercised"
    );
    let bytes = part.checkpoint();
    let record = part.record(RunStatus::Partial);
    let o = record.outlets.as_ref().unwrap().samples.last().unwrap();
    assert!(o.solids_out_underflow > 0.0 && o.solids_in > 0.0, "{o:?}");
    let mut fresh = ParticleEngine::new(&s, TANK, 2).unwrap();
    let again = continue_from(&mut fresh, &bytes);
    assert_same(&reference, &again, "particle thickener");
    assert_eq!(whole.parcel_states(), fresh.parcel_states());
    assert!(reference.outlets.is_some());
}

/// The one-class glass-bead demo on the continuum engine (scalar solver),
/// and the bidisperse batch and the municipal thickener (system and scalar
/// solvers with a bulk flow and ledger), each shortened.
#[test]
fn continuum_restarts_bit_for_bit() {
    let repo = Path::new(env!("CARGO_MANIFEST_DIR")).parent().unwrap();
    let beads = std::fs::read_to_string(repo.join("scenarios/glass-beads-column.yaml"))
        .unwrap()
        .replace("parcels: 20000", "parcels: 20000\n  engine: continuum");
    let municipal = std::fs::read_to_string(repo.join("scenarios/municipal-thickener.yaml"))
        .unwrap()
        .replace("end_time: \"12 h\"", "end_time: \"8 h\"");
    let batch = BATCH.replace("seed: 17", "seed: 17\n  engine: continuum");
    for (name, text, t) in [
        ("beads", beads, 137.0),
        ("bidisperse", batch, 17.0),
        ("municipal", municipal, 5.3 * 3600.0),
    ] {
        let s = setup(&text);
        let reference = ContinuumEngine::new(&s, &text)
            .unwrap()
            .run(&mut Silent, None);
        let bytes = checkpoint_after(&mut ContinuumEngine::new(&s, &text).unwrap(), t);
        let again = continue_from(&mut ContinuumEngine::new(&s, &text).unwrap(), &bytes);
        assert_same(&reference, &again, name);
    }
}

#[test]
fn foreign_or_damaged_checkpoints_are_refused() {
    let s = setup(BATCH);
    let bytes = checkpoint_after(&mut ParticleEngine::new(&s, BATCH, 1).unwrap(), 12.0);
    // Another scenario: the same physics with one more comment line is
    // still another text, and the hash says so.
    let other = format!("# edited\n{BATCH}");
    let mut e = ParticleEngine::new(&setup(&other), &other, 1).unwrap();
    let err = e.restore(&bytes).unwrap_err();
    assert!(matches!(err, CheckpointError::Scenario { .. }), "{err}");
    assert!(err.to_string().contains("another scenario"), "{err}");
    // The other engine.
    let cont = BATCH.replace("seed: 17", "seed: 17\n  engine: continuum");
    let mut c = ContinuumEngine::new(&setup(&cont), &cont).unwrap();
    let err = c.restore(&bytes).unwrap_err();
    assert!(matches!(err, CheckpointError::Engine { .. }), "{err}");
    // Truncated, and one flipped bit in the middle.
    let mut e = ParticleEngine::new(&s, BATCH, 1).unwrap();
    let err = e.restore(&bytes[..bytes.len() / 2]).unwrap_err();
    assert_eq!(err, CheckpointError::Damaged);
    let mut flipped = bytes.clone();
    let mid = flipped.len() / 2;
    flipped[mid] ^= 0x10;
    let mut e = ParticleEngine::new(&s, BATCH, 1).unwrap();
    assert_eq!(e.restore(&flipped).unwrap_err(), CheckpointError::Damaged);
    // The intact one still restores.
    let mut e = ParticleEngine::new(&s, BATCH, 1).unwrap();
    e.restore(&bytes).unwrap();
}
