//! turbid engine: how solid particles settle out of a liquid.
//!
//! * [`physics`] — the laws, as small pure functions (fluid properties, drag,
//!   terminal velocity, hindered settling).
//! * [`scenario`] — the YAML scenario format: parsing, units, validation with
//!   located messages, and resolution into SI inputs for the engines.

pub mod physics;
pub mod scenario;
