//! turbid engine: how solid particles settle out of a liquid.
//!
//! * [`physics`] — the laws, as small pure functions (fluid properties, drag,
//!   terminal velocity, hindered settling).
//! * [`scenario`] — the YAML scenario format: parsing, units, validation with
//!   located messages, and resolution into SI inputs for the engines.
//! * [`analysis`] — from results to decisions: settling-curve analysis
//!   (Kynch construction, compression point), thickener sizing and fitting
//!   of hindered-settling laws to lab tests.
//! * [`continuum`] — the 1-D finite-volume engine over height (Godunov for
//!   one class, Kurganov–Tadmor for the MLB system).
//! * [`operation`] — continuous thickeners: flows, bulk velocities, feed
//!   source and outlet bookkeeping, for any engine.
//! * [`record`] — what a run records (profiles, settling curve, inventory,
//!   outlets of a thickener).
//! * [`output`] — result files: NetCDF-4 (CF) and the settling-curve CSV.
//! * [`engine`] — the [`engine::Engine`] trait both engines implement, and
//!   their shared run loop; [`checkpoint`] — the binary checkpoint format.

pub mod analysis;
pub mod checkpoint;
pub mod continuum;
pub mod engine;
pub mod operation;
pub mod output;
pub mod particles;
pub mod physics;
pub mod record;
pub mod scenario;
