//! turbid engine: how solid particles settle out of a liquid.
//!
//! * [`physics`] — the laws, as small pure functions (fluid properties, drag,
//!   terminal velocity, hindered settling).
//! * [`scenario`] — the YAML scenario format: parsing, units, validation with
//!   located messages, and resolution into SI inputs for the engines.
//! * [`record`] — what a run records (profiles, settling curve, inventory).
//! * [`output`] — result files: NetCDF-4 (CF) and the settling-curve CSV.

pub mod output;
pub mod particles;
pub mod physics;
pub mod record;
pub mod scenario;
