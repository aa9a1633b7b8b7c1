//! The continuum engine: the batch column or continuous thickener as a 1-D
//! finite-volume solution of the kinematic settling laws over height,
//! recorded in the same [`RunRecord`] as the particle engine.
//!
//! * **One size class** ([`scalar`]): Kynch's law `∂φ/∂t + ∂f(φ)/∂x = 0`
//!   with `f = φ v(φ)` from the class's hindered law (`Setup::hindered_law`),
//!   by explicit Godunov finite volumes (physics.md §8.1). The Godunov flux is
//!   exact for any law: the minimum or maximum of `f` over an interval is
//!   taken among its ends and the interior local extrema of `f`, found once
//!   by a scan and golden-section refinement. By default the flux is taken
//!   between minmod-limited linear face values with SSP-RK2 steps (MUSCL,
//!   second order where smooth); piecewise-constant faces with Euler steps
//!   (first-order Godunov) are available ([`Reconstruction`]). With
//!   `models.compression`, the degenerate diffusion `∂²A(φ)/∂x²` of the
//!   compressible bed is added (physics.md §6.1, §8.3) with `a` and `A` from
//!   [`crate::physics::compression`].
//! * **Several classes** ([`system`]): the MLB system of
//!   [`crate::physics::polydisperse`] by a semi-discrete central scheme
//!   (minmod reconstruction, SSP-RK2, Gershgorin speed bounds):
//!   central-upwind by default, Kurganov–Tadmor on request ([`CentralFlux`]).
//!
//! Both keep the solids inventory of every class to rounding (the fluxes
//! telescope and the walls are closed), every class non-negative and the total
//! at or below φmax through a conservative **packing cap** on the fluxes
//! (see [`scalar::ScalarSolver`] and the [`system`] docs).
//!
//! # Steps and records
//!
//! Steps are explicit with the largest stable length for the Courant number
//! `C` = `numerics.courant`: `Δt (m max|f'|/Δz + 2 max a/Δz²) = C` for one
//! class (`m` = 2 for linear faces, 1 for constant ones), and
//! `Δt max(a⁺, −a⁻)/Δz = C/2` for several. A step is shortened to end
//! exactly on the next record time (`run.output_interval`, and the end time),
//! where a [`Frame`] is taken:
//!
//! * profiles: cell values averaged over the record's height slabs
//!   (`output.height_bins`), weighting each cell by its overlap with the slab,
//!   so the slab inventory equals the cell inventory;
//! * interface: [`interface_height`] of the slab profile (the rule both
//!   engines share);
//! * bed height: the height of the stack of cells, from the floor up, that
//!   are packed — total φ ≥ φmax (1 − 1e-9) — or, with compression, at or
//!   above the gel point φc, where the network carries stress. It is a whole
//!   number of cells, and it lags the bed surface by the width of the smeared
//!   transition above it (a few cells where that surface is a contact
//!   discontinuity, as above a fan);
//! * solids volume: `A Δz Σ φ_j` over cells and classes.
//!
//! The grid has `numerics.cells` cells over the fill height.
//!
//! # Continuous thickener
//!
//! With `setup.thickener` the same solvers run the consistent model of
//! Bürger, Diehl & Nopens (2011), Water Res. 45(6), 2247–2260 (zones and
//! outlet conditions as summarised in physics.md §7.2; equation layout from
//! memory, the inlet dispersion term of that model left out), through the
//! engine-neutral [`crate::operation`] layer:
//!
//! * the grid covers floor to overflow lip; the cell that holds the feed
//!   level takes the feed as a source `Q_f φ_f s_i/(A Δz)` per class;
//! * every interface at or below the feed cell's bottom face carries, besides
//!   the batch flux (and compression), the bulk flux `q_u φ` of the cell
//!   above it (upwind, downward); every interface at or above its top face
//!   `−q_e φ` of the cell below it (upward); for several classes the bulk
//!   velocity is added to each class's velocity this way, so the
//!   volume-average velocity is `q` (the batch MLB velocities have volume
//!   average zero);
//! * the floor and the top are the outlets: the batch flux and compression
//!   stop there, only the bulk flow carries solids out, `q_u φ_0` into the
//!   underflow and `q_e φ_{N−1}` over the lip, so `C_u` and `C_e` are the
//!   floor and top cells' concentrations (the outlet zones of the model,
//!   where solids only travel with the bulk, need no cells);
//! * the step also honours `max(q_u, q_e)` in the Courant limit and ends on
//!   every schedule change ([`crate::operation::Operation::next_change`]);
//!   during a ramp the flows are taken at the step's midpoint, the exact mean
//!   of a linear schedule;
//! * the solids that cross the boundaries are booked per class from the
//!   fluxes actually applied (both SSP-RK2 stages, weighted ½), so
//!   fed − drawn off − accumulated is rounding (about 1e-12 of the feed);
//! * records add an [`crate::record::OutletSample`]; the frame's
//!   `interface_height` is the blanket level
//!   ([`crate::record::blanket_level`] on the cell profile, threshold
//!   `operation.blanket_threshold`).

pub mod scalar;
pub mod system;

use crate::checkpoint::{CheckpointError, Reader, Writer};
use crate::operation::{Operation, OutletLedger};
use crate::particles::{EngineError, Monitor};
use crate::physics::compression::PowerLawStress;
use crate::record::{
    Frame, OutletSample, OutletSeries, RecordLayout, RunRecord, RunStatus, blanket_level,
    interface_height,
};
use crate::scenario::Setup;
pub use scalar::Bulk;
pub use scalar::Reconstruction;
use scalar::{BedDiffusion, ScalarFlux, ScalarSolver};
use std::sync::Arc;
use std::sync::atomic::AtomicBool;
pub use system::CentralFlux;
use system::{MlbFlux, SystemSolver};

/// Cells are "packed" from this fraction of φmax up (bed height).
pub(crate) const PACKED: f64 = 1.0 - 1e-9;

enum Solver {
    Scalar(ScalarSolver),
    System(SystemSolver),
}

/// A batch-settling run of the continuum engine.
pub struct ContinuumEngine {
    solver: Solver,
    layout: RecordLayout,
    frames: Vec<Frame>,
    rebin: Rebin,
    cells: usize,
    height: f64,
    phi0: f64,
    phi_max: f64,
    /// Bed threshold: φmax (1 − 1e-9), or the gel point with compression.
    bed_level: f64,
    courant: f64,
    time: f64,
    end: f64,
    interval: f64,
    next_record: u64,
    steps: u64,
    scenario_yaml: String,
    title: String,
    seed: u64,
    /// Feed, outlets and their bookkeeping of a continuous thickener.
    thickener: Option<Continuous>,
}

/// The continuous part of a thickener run.
struct Continuous {
    op: Operation,
    /// Cell that holds the feed level.
    feed_cell: usize,
    ledger: OutletLedger,
    samples: Vec<OutletSample>,
}

impl ContinuumEngine {
    /// Build the grid for `setup` with `setup.numerics.cells` cells over the
    /// fill height, uniform at the initial loading.
    ///
    /// Refuses (`EngineError::Unsupported`) bed compression together with
    /// several size classes, which this engine does not model.
    pub fn new(setup: &Setup, scenario_yaml: &str) -> Result<Self, EngineError> {
        Self::with_schemes(
            setup,
            scenario_yaml,
            Reconstruction::default(),
            CentralFlux::default(),
        )
    }

    /// As [`new`](Self::new), with the face reconstruction of the one-class
    /// solver and the interface flux of the several-class solver chosen (the
    /// several-class solver always reconstructs linearly with minmod).
    pub fn with_schemes(
        setup: &Setup,
        scenario_yaml: &str,
        reconstruction: Reconstruction,
        central: CentralFlux,
    ) -> Result<Self, EngineError> {
        let cells = setup.numerics.cells;
        if cells < 3 {
            return Err(EngineError::Unsupported(format!(
                "the continuum engine needs at least 3 cells, got {cells}"
            )));
        }
        if setup.classes.is_empty() {
            return Err(EngineError::Unsupported("no size classes to settle".into()));
        }
        let height = setup.column.height;
        let phi0 = setup.initial_volume_fraction;
        let phi_max = setup.max_packing;
        let mut bed_level = phi_max * PACKED;
        let solver = if setup.classes.len() == 1 {
            let class = &setup.classes[0];
            let law = setup.hindered_law(class);
            let v_t = class.terminal.velocity;
            let diffusion = setup.compression.map(|c| {
                let stress = PowerLawStress {
                    yield_stress: c.yield_stress,
                    gel_point: c.gel_point,
                    exponent: c.exponent,
                };
                bed_level = c.gel_point;
                BedDiffusion::new(
                    law,
                    v_t,
                    phi_max,
                    stress,
                    setup.species[class.species].density - setup.fluid.density,
                    setup.gravity,
                )
            });
            Solver::Scalar(ScalarSolver::new(
                ScalarFlux::new(law, v_t, phi_max),
                diffusion,
                reconstruction,
                phi_max,
                height,
                cells,
                phi0,
            ))
        } else {
            if setup.compression.is_some() {
                return Err(EngineError::Unsupported(
                    "the continuum engine models bed compression for one size class only \
                     (`models.compression` with several classes); remove it, or describe the \
                     solids by one size"
                        .into(),
                ));
            }
            let laws = setup
                .classes
                .iter()
                .map(|c| setup.hindered_law(c))
                .collect();
            let v_t = setup.classes.iter().map(|c| c.terminal.velocity).collect();
            let excess = setup
                .classes
                .iter()
                .map(|c| setup.species[c.species].density - setup.fluid.density)
                .collect();
            let initial: Vec<f64> = setup
                .classes
                .iter()
                .map(|c| phi0 * c.volume_share)
                .collect();
            Solver::System(SystemSolver::new(
                MlbFlux::new(laws, v_t, excess, phi_max),
                central,
                phi_max,
                height,
                cells,
                &initial,
            ))
        };
        let layout = record_layout(setup);
        let rebin = Rebin::new(cells, &layout.z_edges, height);
        let mut engine = ContinuumEngine {
            solver,
            layout,
            frames: Vec::new(),
            rebin,
            cells,
            height,
            phi0,
            phi_max,
            bed_level,
            courant: setup.numerics.courant,
            time: 0.0,
            end: setup.run.end_time,
            interval: setup.run.output_interval,
            next_record: 1,
            steps: 0,
            scenario_yaml: scenario_yaml.to_string(),
            title: setup.title.clone(),
            seed: setup.run.seed,
            thickener: None,
        };
        if let Some(op) = &setup.thickener {
            let dz = height / cells as f64;
            let feed_cell = ((op.feed_level / dz).floor() as usize).min(cells - 1);
            let initial = op
                .feed_class_share
                .iter()
                .map(|s| phi0 * s * height * op.area)
                .collect();
            engine.thickener = Some(Continuous {
                op: op.clone(),
                feed_cell,
                ledger: OutletLedger::new(initial),
                samples: Vec::new(),
            });
        }
        let frame = engine.take_frame();
        engine.frames.push(frame);
        Ok(engine)
    }

    /// Simulated time, s.
    pub fn time(&self) -> f64 {
        self.time
    }

    pub fn finished(&self) -> bool {
        self.time >= self.end
    }

    /// Number of cells over the fill height.
    pub fn cells(&self) -> usize {
        self.cells
    }

    /// Cell height Δz, m.
    pub fn cell_height(&self) -> f64 {
        self.height / self.cells as f64
    }

    /// Steps taken so far.
    pub fn steps(&self) -> u64 {
        self.steps
    }

    /// Interfaces at which the packing cap lowered the flux so far (stage
    /// fluxes for several classes).
    pub fn capped_fluxes(&self) -> u64 {
        match &self.solver {
            Solver::Scalar(s) => s.capped,
            Solver::System(s) => s.capped,
        }
    }

    /// Number of size classes.
    pub fn classes(&self) -> usize {
        match &self.solver {
            Solver::Scalar(_) => 1,
            Solver::System(s) => s.classes(),
        }
    }

    /// Volume fraction of class `class` in every cell, from the floor up.
    pub fn cell_profile(&self, class: usize) -> Vec<f64> {
        match &self.solver {
            Solver::Scalar(s) => {
                assert_eq!(class, 0, "one class");
                s.phi.clone()
            }
            Solver::System(s) => s
                .phi
                .chunks_exact(s.classes())
                .map(|cell| cell[class])
                .collect(),
        }
    }

    /// Total volume fraction in every cell, from the floor up.
    pub fn cell_total(&self) -> Vec<f64> {
        match &self.solver {
            Solver::Scalar(s) => s.phi.clone(),
            Solver::System(s) => s
                .phi
                .chunks_exact(s.classes())
                .map(|cell| cell.iter().sum())
                .collect(),
        }
    }

    fn next_record_time(&self) -> f64 {
        (self.next_record as f64 * self.interval).min(self.end)
    }

    /// One step: as long as the Courant limit allows, shortened to end on the
    /// next record time (where a frame is taken) or on the next change of a
    /// thickener's schedules (so a step change acts on time).
    pub fn step(&mut self) {
        if self.finished() {
            return;
        }
        let record_time = self.next_record_time();
        let mut target = record_time;
        let mut ramping = false;
        if let Some(t) = &self.thickener {
            if let Some(change) = t.op.next_change(self.time) {
                target = target.min(change);
            }
            ramping = t.op.is_ramping(self.time);
        }
        let to_target = target - self.time;
        let taken = if !ramping {
            self.set_bulk(self.time, None);
            match &mut self.solver {
                Solver::Scalar(s) => {
                    let dt = s.stable_step(self.courant).min(to_target);
                    s.step(dt);
                    dt
                }
                Solver::System(s) => s.step(to_target, self.courant),
            }
        } else {
            // A ramp: the step length from the fastest bulk flow until the
            // target, then the flows at the step's midpoint (the exact mean
            // of a linear ramp, so the solids fed match the schedule).
            let fastest = self
                .thickener
                .as_ref()
                .map(|t| t.op.max_bulk_speed(self.time, target));
            self.set_bulk(self.time, fastest);
            let dt = match &mut self.solver {
                Solver::Scalar(s) => s.stable_step(self.courant),
                Solver::System(s) => s.first_stage_step(self.courant),
            }
            .min(to_target);
            self.set_bulk(self.time + 0.5 * dt, None);
            match &mut self.solver {
                Solver::Scalar(s) => {
                    s.step(dt);
                    dt
                }
                Solver::System(s) => s.step(dt, self.courant),
            }
        };
        self.steps += 1;
        self.book_crossings();
        // A step within rounding of the target lands on it.
        if taken >= to_target * (1.0 - 1e-12) {
            self.time = target;
            if target == record_time {
                let frame = self.take_frame();
                self.frames.push(frame);
                self.next_record += 1;
            }
        } else {
            self.time += taken;
        }
    }

    /// Bulk velocities and feed source of the thickener at `time`; with
    /// `speed`, both bulk velocities are set to it instead (to size a step).
    fn set_bulk(&mut self, time: f64, speed: Option<f64>) {
        let Some(t) = &self.thickener else {
            return;
        };
        let p = t.op.at(time);
        let dz = self.cell_height();
        let mut sources = vec![0.0; t.op.feed_class_share.len()];
        t.op.feed_solids_flux(time, &mut sources);
        for s in &mut sources {
            *s /= dz;
        }
        let bulk = Bulk {
            feed_cell: t.feed_cell,
            underflow_velocity: speed.unwrap_or(p.underflow_velocity()),
            overflow_velocity: speed.unwrap_or(p.overflow_velocity()),
            source: sources.iter().sum(),
        };
        match &mut self.solver {
            Solver::Scalar(s) => s.bulk = Some(bulk),
            Solver::System(s) => {
                s.bulk = Some(bulk);
                s.sources = sources;
            }
        }
    }

    /// Move the solids that crossed the boundaries in the last step into
    /// the ledger (m³ per class).
    fn book_crossings(&mut self) {
        let Some(t) = &mut self.thickener else {
            return;
        };
        let a = t.op.area;
        let scale = |v: Vec<f64>| -> Vec<f64> { v.into_iter().map(|x| x * a).collect() };
        let (fed, under, over) = match &mut self.solver {
            Solver::Scalar(s) => {
                let c = s.take_crossed();
                (vec![c.fed], vec![c.underflow], vec![c.overflow])
            }
            Solver::System(s) => s.take_crossed(),
        };
        t.ledger.add(&scale(fed), &scale(under), &scale(over));
    }

    /// Run to the end time, or until `stop` is raised (then the record is
    /// partial). Reports cell updates (cells × steps) as the work done.
    pub fn run(&mut self, monitor: &mut dyn Monitor, stop: Option<&Arc<AtomicBool>>) -> RunRecord {
        crate::engine::run(self, monitor, stop, None)
    }

    /// The record so far.
    pub fn record(&self, status: RunStatus) -> RunRecord {
        RunRecord {
            layout: self.layout.clone(),
            frames: self.frames.clone(),
            status,
            scenario_yaml: self.scenario_yaml.clone(),
            title: self.title.clone(),
            seed: self.seed,
            engine: "continuum".to_string(),
            resolution: self.cells as u64,
            outlets: self.thickener.as_ref().map(|t| OutletSeries {
                feed_level: t.op.feed_level,
                overflow_level: self.height,
                blanket_threshold: t.op.blanket_threshold * t.op.mean_density(),
                samples: t.samples.clone(),
            }),
        }
    }

    fn take_frame(&mut self) -> Frame {
        let nz = self.layout.nz();
        let nc = self.classes();
        let mut phi_class = vec![0.0; nc * nz];
        let mut solids = 0.0;
        let mut inventory = vec![0.0; nc];
        let mut bottom = vec![0.0; nc];
        let mut top = vec![0.0; nc];
        let volume = self.cell_height() * self.layout.area;
        for c in 0..nc {
            let cells = self.cell_profile(c);
            let sum = cells.iter().sum::<f64>();
            solids += sum;
            inventory[c] = sum * volume;
            bottom[c] = cells[0];
            top[c] = cells[self.cells - 1];
            self.rebin
                .average(&cells, &mut phi_class[c * nz..(c + 1) * nz]);
        }
        let total = self.cell_total();
        let packed = total.iter().take_while(|&&p| p >= self.bed_level).count();
        let mut frame = Frame {
            time: self.time,
            phi_class,
            interface_height: 0.0,
            bed_height: packed as f64 * self.cell_height(),
            solids_volume: solids * self.cell_height() * self.layout.area,
        };
        match &mut self.thickener {
            None => {
                frame.interface_height =
                    interface_height(&frame.phi_total(nz), &self.layout.z, self.phi0, self.height);
            }
            Some(t) => {
                // Blanket on the cell profile (finer than the record's slabs).
                let dz = self.height / self.cells as f64;
                let centres: Vec<f64> = (0..self.cells).map(|j| (j as f64 + 0.5) * dz).collect();
                let blanket = blanket_level(&total, &centres, t.op.blanket_threshold, self.height);
                frame.interface_height = blanket;
                // The outlets carry the bulk flux of the cell inside them:
                // C_u = C(floor cell), C_e = C(top cell) (Bürger–Diehl).
                let sample = t
                    .ledger
                    .sample(&t.op, self.time, &inventory, &bottom, &top, blanket);
                t.samples.push(sample);
            }
        }
        frame
    }

    /// Packing limit φmax of the run.
    pub fn max_packing(&self) -> f64 {
        self.phi_max
    }
}

impl crate::engine::Engine for ContinuumEngine {
    fn name(&self) -> &'static str {
        "continuum"
    }
    fn time(&self) -> f64 {
        self.time
    }
    fn end_time(&self) -> f64 {
        self.end
    }
    fn step(&mut self) {
        ContinuumEngine::step(self)
    }
    fn finished(&self) -> bool {
        ContinuumEngine::finished(self)
    }
    fn record(&self, status: RunStatus) -> RunRecord {
        ContinuumEngine::record(self, status)
    }
    fn frames_recorded(&self) -> usize {
        self.frames.len()
    }
    fn work_done(&self) -> u64 {
        self.steps * self.cells as u64
    }
    fn scenario_text(&self) -> &str {
        &self.scenario_yaml
    }

    /// Time, counters, frames, the cell values and the thickener's ledger
    /// and samples. The solvers' other buffers (fluxes, stages, the bulk
    /// flow, boundary crossings) are set or emptied within every step.
    fn save_state(&mut self, w: &mut Writer) {
        w.f64(self.time);
        w.u64(self.next_record);
        w.u64(self.steps);
        w.frames(&self.frames);
        match &self.solver {
            Solver::Scalar(s) => {
                w.f64s(&s.phi);
                w.u64(s.capped);
                w.u64(0);
            }
            Solver::System(s) => {
                w.f64s(&s.phi);
                w.u64(s.capped);
                w.u64(s.retries);
            }
        }
        match &self.thickener {
            Some(t) => {
                w.bool(true);
                w.f64s(&t.ledger.fed);
                w.f64s(&t.ledger.underflow);
                w.f64s(&t.ledger.overflow);
                w.f64s(&t.ledger.initial_inventory);
                w.samples(&t.samples);
            }
            None => w.bool(false),
        }
    }

    fn restore_state(&mut self, r: &mut Reader) -> Result<(), CheckpointError> {
        self.time = r.f64()?;
        self.next_record = r.u64()?;
        self.steps = r.u64()?;
        let frames = r.frames()?;
        let bins = self.layout.nz() * self.classes();
        if frames.iter().any(|f| f.phi_class.len() != bins) {
            return Err(CheckpointError::Mismatch(
                "its frames have another number of height bins or classes".into(),
            ));
        }
        self.frames = frames;
        let n = self.cells * self.classes();
        match &mut self.solver {
            Solver::Scalar(s) => {
                s.phi = r.f64s_of(n, "the cell array")?;
                s.capped = r.u64()?;
                r.u64()?;
            }
            Solver::System(s) => {
                s.phi = r.f64s_of(n, "the cell array")?;
                s.capped = r.u64()?;
                s.retries = r.u64()?;
            }
        }
        let has = r.bool()?;
        match (has, &mut self.thickener) {
            (true, Some(t)) => {
                let nc = t.ledger.fed.len();
                t.ledger.fed = r.f64s_of(nc, "the ledger")?;
                t.ledger.underflow = r.f64s_of(nc, "the ledger")?;
                t.ledger.overflow = r.f64s_of(nc, "the ledger")?;
                t.ledger.initial_inventory = r.f64s_of(nc, "the ledger")?;
                t.samples = r.samples()?;
            }
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

/// The record's fixed description, built as the particle engine builds it.
fn record_layout(setup: &Setup) -> RecordLayout {
    let top = setup.column.height;
    let nz = setup.output.height_bins;
    RecordLayout {
        z: (0..nz)
            .map(|k| top * (k as f64 + 0.5) / nz as f64)
            .collect(),
        z_edges: (0..=nz).map(|k| top * k as f64 / nz as f64).collect(),
        class_diameter: setup.classes.iter().map(|c| c.diameter).collect(),
        class_lower: setup.classes.iter().map(|c| c.lower).collect(),
        class_upper: setup.classes.iter().map(|c| c.upper).collect(),
        class_species: setup.classes.iter().map(|c| c.species).collect(),
        species_name: setup.species.iter().map(|s| s.name.clone()).collect(),
        species_density: setup.species.iter().map(|s| s.density).collect(),
        class_terminal_velocity: setup.classes.iter().map(|c| c.terminal.velocity).collect(),
        area: setup.column.area,
    }
}

/// Overlap weights from cells to height slabs: slab `k` gets
/// `Σ_j φ_j |cell_j ∩ slab_k| / |slab_k|`, so `Σ_k φ̄_k |slab_k| = Σ_j φ_j Δz`.
#[derive(Debug, Clone)]
struct Rebin {
    /// (cell, slab, overlap / slab width), in cell order.
    weights: Vec<(usize, usize, f64)>,
}

impl Rebin {
    fn new(cells: usize, slab_edges: &[f64], height: f64) -> Self {
        let nz = slab_edges.len() - 1;
        let edge = |j: usize| height * j as f64 / cells as f64;
        let mut weights = Vec::new();
        let mut k = 0;
        for j in 0..cells {
            let (lo, hi) = (edge(j), edge(j + 1));
            while k + 1 < nz && slab_edges[k + 1] <= lo {
                k += 1;
            }
            let mut s = k;
            while s < nz {
                let (a, b) = (slab_edges[s], slab_edges[s + 1]);
                let overlap = hi.min(b) - lo.max(a);
                if overlap > 0.0 {
                    weights.push((j, s, overlap / (b - a)));
                }
                if b >= hi {
                    break;
                }
                s += 1;
            }
        }
        Rebin { weights }
    }

    fn average(&self, cells: &[f64], slabs: &mut [f64]) {
        slabs.fill(0.0);
        for &(j, k, w) in &self.weights {
            slabs[k] += w * cells[j];
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rebinning_keeps_the_inventory() {
        // 7 cells onto 3 slabs of a 1.4 m column: Σ slab·width = Σ cell·Δz.
        let edges: Vec<f64> = (0..=3).map(|k| 1.4 * k as f64 / 3.0).collect();
        let r = Rebin::new(7, &edges, 1.4);
        let cells = [0.6, 0.5, 0.4, 0.3, 0.2, 0.1, 0.0];
        let mut slabs = [0.0; 3];
        r.average(&cells, &mut slabs);
        let cell_sum: f64 = cells.iter().sum::<f64>() * 0.2;
        let slab_sum: f64 = slabs.iter().sum::<f64>() * 1.4 / 3.0;
        assert!(
            (cell_sum - slab_sum).abs() < 1e-15,
            "{cell_sum} vs {slab_sum}"
        );
        // Slab 0 covers cells 0, 1 and 1/3 of cell 2: (0.6 + 0.5 + 0.4/3)·0.2/(1.4/3).
        let expect = (0.6 + 0.5 + 0.4 / 3.0) * 0.2 / (1.4 / 3.0);
        assert!(
            (slabs[0] - expect).abs() < 1e-14,
            "{} vs {expect}",
            slabs[0]
        );
        // Identical grids copy the values.
        let r = Rebin::new(4, &[0.0, 0.25, 0.5, 0.75, 1.0], 1.0);
        let mut s = [0.0; 4];
        r.average(&[0.1, 0.2, 0.3, 0.4], &mut s);
        assert_eq!(s, [0.1, 0.2, 0.3, 0.4]);
    }
}
