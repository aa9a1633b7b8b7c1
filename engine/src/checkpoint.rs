//! Checkpoints: the complete state of a run, so that it continues bit for bit
//! as if it had never stopped.
//!
//! A compact binary format of our own, little-endian throughout:
//!
//! ```text
//! magic    8 bytes  "TURBIDCK"
//! version  u32      CHECKPOINT_VERSION
//! engine   u8 len + bytes   "particle" | "continuum"
//! scenario u64      FNV-1a 64 of the scenario text (refused if it differs)
//! length   u64      payload bytes
//! checksum u64      FNV-1a 64 of the payload (refused if it differs)
//! payload           the engine's state (see `Engine::save_state`)
//! ```
//!
//! Every `f64` is stored as its IEEE-754 bits, so values come back exactly.
//! The payload ends with an end marker, so a reader that consumes fewer or
//! more fields than the writer wrote is caught as well.

use crate::record::{Frame, OutletSample};

/// Magic bytes at the start of every checkpoint.
pub const MAGIC: &[u8; 8] = b"TURBIDCK";
/// Layout version; bump it whenever what an engine saves changes.
pub const CHECKPOINT_VERSION: u32 = 1;
const END: u64 = 0x454e_445f_434b_5054; // "TPKC_DNE"

/// FNV-1a, 64 bits: a stable fingerprint (not a security hash).
pub fn fnv1a(bytes: &[u8]) -> u64 {
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    for &b in bytes {
        h ^= u64::from(b);
        h = h.wrapping_mul(0x0000_0100_0000_01b3);
    }
    h
}

/// Why a checkpoint cannot be used.
#[derive(Debug, thiserror::Error, PartialEq)]
pub enum CheckpointError {
    #[error("not a turbid checkpoint (wrong magic bytes)")]
    NotACheckpoint,
    #[error(
        "checkpoint format version {found}, this turbid reads version {expected}; start the run again"
    )]
    Version { found: u32, expected: u32 },
    #[error(
        "the checkpoint is from the {found} engine, this scenario runs the {expected} engine; start the run again"
    )]
    Engine { found: String, expected: String },
    #[error(
        "the checkpoint belongs to another scenario (scenario hash {found:016x}, this file has {expected:016x}): \
         the scenario changed since it was written; start the run again without --resume, or restore the scenario"
    )]
    Scenario { found: u64, expected: u64 },
    #[error(
        "the checkpoint is damaged (truncated, or its checksum does not match); start the run again without --resume"
    )]
    Damaged,
    #[error("the checkpoint does not fit this scenario: {0}; start the run again without --resume")]
    Mismatch(String),
}

/// Appends values to a byte buffer.
#[derive(Default)]
pub struct Writer {
    buf: Vec<u8>,
}

impl Writer {
    pub fn new() -> Self {
        Writer::default()
    }
    pub fn u8(&mut self, v: u8) {
        self.buf.push(v);
    }
    pub fn bool(&mut self, v: bool) {
        self.buf.push(u8::from(v));
    }
    pub fn u16(&mut self, v: u16) {
        self.buf.extend_from_slice(&v.to_le_bytes());
    }
    pub fn u32(&mut self, v: u32) {
        self.buf.extend_from_slice(&v.to_le_bytes());
    }
    pub fn u64(&mut self, v: u64) {
        self.buf.extend_from_slice(&v.to_le_bytes());
    }
    pub fn f64(&mut self, v: f64) {
        self.u64(v.to_bits());
    }
    pub fn len(&mut self, n: usize) {
        self.u64(n as u64);
    }
    pub fn f64s(&mut self, v: &[f64]) {
        self.len(v.len());
        for &x in v {
            self.f64(x);
        }
    }
    pub fn bools(&mut self, v: &[bool]) {
        self.len(v.len());
        for &x in v {
            self.bool(x);
        }
    }
    pub fn opt_f64(&mut self, v: Option<f64>) {
        self.bool(v.is_some());
        self.f64(v.unwrap_or(0.0));
    }
    pub fn frames(&mut self, frames: &[Frame]) {
        self.len(frames.len());
        for f in frames {
            self.f64(f.time);
            self.f64s(&f.phi_class);
            self.f64(f.interface_height);
            self.f64(f.bed_height);
            self.f64(f.solids_volume);
        }
    }
    pub fn samples(&mut self, samples: &[OutletSample]) {
        self.len(samples.len());
        for s in samples {
            for v in sample_scalars(s) {
                self.f64(v);
            }
            self.f64s(&s.underflow_concentration_by_class);
            self.f64s(&s.overflow_concentration_by_class);
        }
    }

    /// The whole file: header plus this payload (with its end marker).
    pub fn finish(mut self, engine: &str, scenario_hash: u64) -> Vec<u8> {
        self.u64(END);
        let payload = self.buf;
        let mut out = Vec::with_capacity(payload.len() + 64);
        out.extend_from_slice(MAGIC);
        out.extend_from_slice(&CHECKPOINT_VERSION.to_le_bytes());
        out.push(engine.len() as u8);
        out.extend_from_slice(engine.as_bytes());
        out.extend_from_slice(&scenario_hash.to_le_bytes());
        out.extend_from_slice(&(payload.len() as u64).to_le_bytes());
        out.extend_from_slice(&fnv1a(&payload).to_le_bytes());
        out.extend_from_slice(&payload);
        out
    }
}

/// The seventeen scalars of an outlet sample, in a fixed order.
fn sample_scalars(s: &OutletSample) -> [f64; 17] {
    [
        s.time,
        s.feed_flow,
        s.underflow_flow,
        s.overflow_flow,
        s.feed_concentration,
        s.underflow_concentration,
        s.overflow_concentration,
        s.feed_solids_rate,
        s.underflow_solids_rate,
        s.overflow_solids_rate,
        s.blanket_level,
        s.solids_in,
        s.solids_out_underflow,
        s.solids_out_overflow,
        s.inventory,
        s.initial_inventory,
        s.balance_residual,
    ]
}

/// Reads values back in the order they were written.
pub struct Reader<'a> {
    buf: &'a [u8],
    at: usize,
}

impl<'a> Reader<'a> {
    /// Check the header of `bytes` (magic, version, engine, scenario hash,
    /// length and checksum) and return a reader over the payload.
    pub fn open(
        bytes: &'a [u8],
        engine: &str,
        scenario_hash: u64,
    ) -> Result<Reader<'a>, CheckpointError> {
        let mut head = Reader { buf: bytes, at: 0 };
        let magic = head.take(8).map_err(|_| CheckpointError::NotACheckpoint)?;
        if magic != MAGIC {
            return Err(CheckpointError::NotACheckpoint);
        }
        let version = head.u32()?;
        if version != CHECKPOINT_VERSION {
            return Err(CheckpointError::Version {
                found: version,
                expected: CHECKPOINT_VERSION,
            });
        }
        let n = head.u8()? as usize;
        let name = String::from_utf8_lossy(head.take(n)?).into_owned();
        let hash = head.u64()?;
        let length = head.u64()?;
        let checksum = head.u64()?;
        let rest = &bytes[head.at..];
        if rest.len() as u64 != length || fnv1a(rest) != checksum {
            return Err(CheckpointError::Damaged);
        }
        // Checked after the checksum: a damaged file says so first.
        if name != engine {
            return Err(CheckpointError::Engine {
                found: name,
                expected: engine.to_string(),
            });
        }
        if hash != scenario_hash {
            return Err(CheckpointError::Scenario {
                found: hash,
                expected: scenario_hash,
            });
        }
        Ok(Reader { buf: rest, at: 0 })
    }

    fn take(&mut self, n: usize) -> Result<&'a [u8], CheckpointError> {
        let end = self.at.checked_add(n).ok_or(CheckpointError::Damaged)?;
        let s = self.buf.get(self.at..end).ok_or(CheckpointError::Damaged)?;
        self.at = end;
        Ok(s)
    }
    fn array<const N: usize>(&mut self) -> Result<[u8; N], CheckpointError> {
        let mut a = [0u8; N];
        a.copy_from_slice(self.take(N)?);
        Ok(a)
    }
    pub fn u8(&mut self) -> Result<u8, CheckpointError> {
        Ok(self.take(1)?[0])
    }
    pub fn bool(&mut self) -> Result<bool, CheckpointError> {
        match self.u8()? {
            0 => Ok(false),
            1 => Ok(true),
            _ => Err(CheckpointError::Damaged),
        }
    }
    pub fn u16(&mut self) -> Result<u16, CheckpointError> {
        Ok(u16::from_le_bytes(self.array()?))
    }
    pub fn u32(&mut self) -> Result<u32, CheckpointError> {
        Ok(u32::from_le_bytes(self.array()?))
    }
    pub fn u64(&mut self) -> Result<u64, CheckpointError> {
        Ok(u64::from_le_bytes(self.array()?))
    }
    pub fn f64(&mut self) -> Result<f64, CheckpointError> {
        Ok(f64::from_bits(self.u64()?))
    }
    /// A length, checked against the bytes left (each item takes at least
    /// `min_item` bytes), so a damaged length never allocates wildly.
    pub fn len(&mut self, min_item: usize) -> Result<usize, CheckpointError> {
        let n = self.u64()?;
        let left = (self.buf.len() - self.at) as u64;
        if n.saturating_mul(min_item.max(1) as u64) > left {
            return Err(CheckpointError::Damaged);
        }
        Ok(n as usize)
    }
    pub fn f64s(&mut self) -> Result<Vec<f64>, CheckpointError> {
        let n = self.len(8)?;
        (0..n).map(|_| self.f64()).collect()
    }
    /// A vector of exactly `n` values (an array whose size the scenario fixes).
    pub fn f64s_of(&mut self, n: usize, what: &str) -> Result<Vec<f64>, CheckpointError> {
        let v = self.f64s()?;
        if v.len() != n {
            return Err(CheckpointError::Mismatch(format!(
                "{what} has {} values, expected {n}",
                v.len()
            )));
        }
        Ok(v)
    }
    pub fn bools(&mut self) -> Result<Vec<bool>, CheckpointError> {
        let n = self.len(1)?;
        (0..n).map(|_| self.bool()).collect()
    }
    pub fn opt_f64(&mut self) -> Result<Option<f64>, CheckpointError> {
        let some = self.bool()?;
        let v = self.f64()?;
        Ok(some.then_some(v))
    }
    pub fn frames(&mut self) -> Result<Vec<Frame>, CheckpointError> {
        let n = self.len(40)?;
        (0..n)
            .map(|_| {
                Ok(Frame {
                    time: self.f64()?,
                    phi_class: self.f64s()?,
                    interface_height: self.f64()?,
                    bed_height: self.f64()?,
                    solids_volume: self.f64()?,
                })
            })
            .collect()
    }
    pub fn samples(&mut self) -> Result<Vec<OutletSample>, CheckpointError> {
        let n = self.len(17 * 8)?;
        (0..n)
            .map(|_| {
                let mut v = [0.0; 17];
                for x in &mut v {
                    *x = self.f64()?;
                }
                Ok(OutletSample {
                    time: v[0],
                    feed_flow: v[1],
                    underflow_flow: v[2],
                    overflow_flow: v[3],
                    feed_concentration: v[4],
                    underflow_concentration: v[5],
                    overflow_concentration: v[6],
                    feed_solids_rate: v[7],
                    underflow_solids_rate: v[8],
                    overflow_solids_rate: v[9],
                    blanket_level: v[10],
                    solids_in: v[11],
                    solids_out_underflow: v[12],
                    solids_out_overflow: v[13],
                    inventory: v[14],
                    initial_inventory: v[15],
                    balance_residual: v[16],
                    underflow_concentration_by_class: self.f64s()?,
                    overflow_concentration_by_class: self.f64s()?,
                })
            })
            .collect()
    }

    /// Check that the payload was read to its end marker exactly.
    pub fn finish(mut self) -> Result<(), CheckpointError> {
        if self.u64()? != END || self.at != self.buf.len() {
            return Err(CheckpointError::Mismatch(
                "its layout differs from what this engine writes".into(),
            ));
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn values_round_trip_bit_for_bit_and_damage_is_caught() {
        let mut w = Writer::new();
        // Values whose bits a text format could lose: a NaN payload, −0,
        // a subnormal, the largest finite number.
        let odd = [
            f64::from_bits(0x7ff8_0000_dead_beef),
            -0.0,
            5e-324,
            f64::MAX,
        ];
        w.f64s(&odd);
        w.u16(7);
        w.bools(&[true, false]);
        w.opt_f64(None);
        let bytes = w.finish("particle", 42);
        let mut r = Reader::open(&bytes, "particle", 42).unwrap();
        let back = r.f64s().unwrap();
        assert_eq!(
            back.iter().map(|v| v.to_bits()).collect::<Vec<_>>(),
            odd.iter().map(|v| v.to_bits()).collect::<Vec<_>>()
        );
        assert_eq!(r.u16().unwrap(), 7);
        assert_eq!(r.bools().unwrap(), vec![true, false]);
        assert_eq!(r.opt_f64().unwrap(), None);
        r.finish().unwrap();

        assert!(matches!(
            Reader::open(&bytes, "particle", 43),
            Err(CheckpointError::Scenario { .. })
        ));
        assert!(matches!(
            Reader::open(&bytes, "continuum", 42),
            Err(CheckpointError::Engine { .. })
        ));
        let mut flipped = bytes.clone();
        *flipped.last_mut().unwrap() ^= 1;
        assert_eq!(
            Reader::open(&flipped, "particle", 42).err(),
            Some(CheckpointError::Damaged)
        );
        assert_eq!(
            Reader::open(&bytes[..bytes.len() - 3], "particle", 42).err(),
            Some(CheckpointError::Damaged)
        );
        assert_eq!(
            Reader::open(b"hello", "particle", 42).err(),
            Some(CheckpointError::NotACheckpoint)
        );
    }
}
