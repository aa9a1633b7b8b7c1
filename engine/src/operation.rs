//! Continuous operation of a thickener, for any engine: what flows in and out
//! at time `t`, and the bookkeeping of the solids that cross the outlets.
//!
//! Pure functions of the scenario, in SI; nothing here knows about cells or
//! parcels. Heights are measured up from the floor (the underflow outlet);
//! velocities and fluxes are **positive downward**, as everywhere in the
//! engines.
//!
//! # The ideal continuous thickener (Bürger–Diehl)
//!
//! The vessel of cross-section `A` and height `H` (floor to overflow lip)
//! takes the feed `Q_f` at solids volume fraction `φ_f` at the feed level
//! `z_f`; the underflow `Q_u` leaves through the floor and the overflow
//! `Q_e = Q_f − Q_u` over the lip. The liquid and solids move with the bulk
//! (volume-average) velocity
//!
//! ```text
//! q(z, t) = +q_u = Q_u/A   below the feed (z < z_f), downward,
//! q(z, t) = −q_e = −Q_e/A  above the feed (z > z_f), upward,
//! ```
//!
//! and the solids of class `i` move relative to the vessel with `q` plus
//! their settling velocity relative to the suspension (the batch velocity of
//! the closed vessel, whose volume-average velocity is zero). The feed enters
//! as a point source of solids volume flux `Q_f φ_f s_i / A` per class
//! (`s_i` = the class's share of the feed solids volume). Above the lip and
//! below the floor the solids are carried by the bulk flow only: settling
//! (and compression) act inside the vessel only, so the solids flux out at
//! the floor is `q_u φ(0⁺)` and over the lip `q_e φ(H⁻)`. This is the
//! consistent model of Bürger, Diehl & Nopens (2011), Water Res. 45(6),
//! 2247–2260, with the zones and outlet conditions as summarised in
//! physics.md §7.2 (equation layout from memory; the dispersion term of that
//! model near the inlet is not included).
//!
//! # Use from an engine
//!
//! 1. `let op = &setup.thickener.as_ref().unwrap().operation;`
//! 2. each step from `t`: `let p = op.at(t);` gives the flows; `p.underflow_velocity()`,
//!    `p.overflow_velocity()` and [`Operation::bulk_velocity`] give `q`;
//!    [`Operation::feed_solids_flux`] the source per class. Shorten the step
//!    to end at [`Operation::next_change`] when a schedule jumps there.
//! 3. after the step, [`OutletLedger::add`] the solids volumes that entered
//!    and left (per class, m³) during it;
//! 4. at each record, [`OutletLedger::sample`] turns the ledger, the
//!    inventory and the outlet concentrations into a
//!    [`crate::record::OutletSample`].

use crate::record::OutletSample;

/// A quantity that may change during the run, in SI.
#[derive(Debug, Clone, PartialEq)]
pub enum Schedule {
    /// The same value throughout.
    Constant(f64),
    /// `(time, value)` rows, times increasing: each value holds from its time
    /// until the next row's; before the first time the first value holds.
    Steps(Vec<(f64, f64)>),
    /// `(time, value)` rows, times increasing: linear interpolation between
    /// rows, the end values beyond them. A ramp is a two-row table.
    Table(Vec<(f64, f64)>),
}

impl Schedule {
    /// The value at time `t`, s.
    pub fn at(&self, t: f64) -> f64 {
        match self {
            Schedule::Constant(v) => *v,
            Schedule::Steps(rows) => {
                let mut v = rows[0].1;
                for &(time, value) in rows {
                    if t >= time {
                        v = value;
                    } else {
                        break;
                    }
                }
                v
            }
            Schedule::Table(rows) => {
                let n = rows.len();
                if t <= rows[0].0 {
                    return rows[0].1;
                }
                if t >= rows[n - 1].0 {
                    return rows[n - 1].1;
                }
                let k = rows.partition_point(|r| r.0 <= t);
                let ((t0, v0), (t1, v1)) = (rows[k - 1], rows[k]);
                v0 + (v1 - v0) * (t - t0) / (t1 - t0)
            }
        }
    }

    /// Times at which the value jumps (steps) or its slope changes (table).
    pub fn breakpoints(&self) -> Vec<f64> {
        match self {
            Schedule::Constant(_) => Vec::new(),
            Schedule::Steps(rows) | Schedule::Table(rows) => rows.iter().map(|r| r.0).collect(),
        }
    }
}

/// How the underflow is set.
#[derive(Debug, Clone, PartialEq)]
pub enum Underflow {
    /// Underflow volume flow `Q_u`, m³/s.
    Flow(Schedule),
    /// Underflow over feed flow, `Q_u/Q_f` (dimensionless, 0 ≤ r < 1).
    Ratio(Schedule),
}

/// The flows at one instant.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct OperatingPoint {
    /// Feed, underflow and overflow volume flows, m³/s (`Q_e = Q_f − Q_u`).
    pub feed_flow: f64,
    pub underflow_flow: f64,
    pub overflow_flow: f64,
    /// Total solids volume fraction of the feed, φ_f.
    pub feed_volume_fraction: f64,
    /// Cross-section, m² (copied so the velocities below need nothing else).
    pub area: f64,
}

impl OperatingPoint {
    /// `q_u = Q_u/A`, m/s, downward below the feed.
    pub fn underflow_velocity(&self) -> f64 {
        self.underflow_flow / self.area
    }
    /// `q_e = Q_e/A`, m/s, upward above the feed (returned as a positive number).
    pub fn overflow_velocity(&self) -> f64 {
        self.overflow_flow / self.area
    }
    /// Solids volume flow of the feed, `Q_f φ_f`, m³/s.
    pub fn feed_solids_volume_flow(&self) -> f64 {
        self.feed_flow * self.feed_volume_fraction
    }
}

/// A continuous thickener's operation, resolved from the scenario.
#[derive(Debug, Clone, PartialEq)]
pub struct Operation {
    /// Cross-section `A`, m².
    pub area: f64,
    /// Floor (underflow outlet) to overflow lip, m.
    pub height: f64,
    /// Height of the feed above the floor, m (0 < z_f < H).
    pub feed_level: f64,
    /// Feed volume flow `Q_f`, m³/s.
    pub feed_flow: Schedule,
    /// Total solids volume fraction of the feed, φ_f.
    pub feed_solids: Schedule,
    pub underflow: Underflow,
    /// Share of each size class in the feed solids volume (sums to 1).
    pub feed_class_share: Vec<f64>,
    /// Solid density of each class's species, kg/m³.
    pub class_density: Vec<f64>,
    /// Blanket (sludge bed) level rule: the highest height where the total
    /// solids volume fraction reaches this value (see
    /// [`crate::record::blanket_level`]).
    pub blanket_threshold: f64,
}

impl Operation {
    /// The flows at time `t`, s.
    pub fn at(&self, t: f64) -> OperatingPoint {
        let feed = self.feed_flow.at(t);
        let under = match &self.underflow {
            Underflow::Flow(s) => s.at(t),
            Underflow::Ratio(s) => s.at(t) * feed,
        };
        OperatingPoint {
            feed_flow: feed,
            underflow_flow: under,
            overflow_flow: feed - under,
            feed_volume_fraction: self.feed_solids.at(t),
            area: self.area,
        }
    }

    /// Bulk velocity at height `z` (m above the floor) and time `t`, m/s,
    /// positive downward: `q_u` below the feed level, `−q_e` above it.
    pub fn bulk_velocity(&self, t: f64, z: f64) -> f64 {
        let p = self.at(t);
        if z < self.feed_level {
            p.underflow_velocity()
        } else {
            -p.overflow_velocity()
        }
    }

    /// Feed solids volume flux per class, `Q_f φ_f s_i / A`, m/s, into `out`.
    pub fn feed_solids_flux(&self, t: f64, out: &mut [f64]) {
        let p = self.at(t);
        let total = p.feed_solids_volume_flow() / self.area;
        for (o, s) in out.iter_mut().zip(&self.feed_class_share) {
            *o = total * s;
        }
    }

    /// Feed solids mass concentration at `t`, kg/m³.
    pub fn feed_concentration(&self, t: f64) -> f64 {
        self.feed_solids.at(t) * self.mean_density()
    }

    /// Mean solid density of the feed solids, kg/m³ (by volume share).
    pub fn mean_density(&self) -> f64 {
        self.feed_class_share
            .iter()
            .zip(&self.class_density)
            .map(|(s, r)| s * r)
            .sum()
    }

    /// The first time after `t` at which a schedule jumps or bends, if any;
    /// an engine lands a step there so a change takes effect on time.
    pub fn next_change(&self, t: f64) -> Option<f64> {
        let under = match &self.underflow {
            Underflow::Flow(s) | Underflow::Ratio(s) => s,
        };
        [&self.feed_flow, &self.feed_solids, under]
            .iter()
            .flat_map(|s| s.breakpoints())
            .filter(|&b| b > t)
            .min_by(f64::total_cmp)
    }

    /// Whether a schedule changes linearly at `t` (inside a table's span),
    /// so that the value at a step's start is not its mean over the step.
    pub fn is_ramping(&self, t: f64) -> bool {
        let under = match &self.underflow {
            Underflow::Flow(s) | Underflow::Ratio(s) => s,
        };
        [&self.feed_flow, &self.feed_solids, under]
            .iter()
            .any(|s| match s {
                Schedule::Table(rows) => rows[0].0 <= t && t < rows[rows.len() - 1].0,
                _ => false,
            })
    }

    /// Largest of `q_u` and `q_e` over `[t0, t1]` (schedules are piecewise linear,
    /// so the values at the ends and at breakpoints inside bound it), m/s.
    pub fn max_bulk_speed(&self, t0: f64, t1: f64) -> f64 {
        let mut times = vec![t0, t1];
        if let Some(mut b) = self.next_change(t0) {
            while b < t1 {
                times.push(b);
                match self.next_change(b) {
                    Some(n) => b = n,
                    None => break,
                }
            }
        }
        times
            .iter()
            .map(|&t| {
                let p = self.at(t);
                p.underflow_velocity()
                    .abs()
                    .max(p.overflow_velocity().abs())
            })
            .fold(0.0, f64::max)
    }
}

/// Cumulative solids volumes (m³, per class) that entered with the feed and
/// left through the underflow and the overflow since the start of the run.
#[derive(Debug, Clone, PartialEq)]
pub struct OutletLedger {
    pub fed: Vec<f64>,
    pub underflow: Vec<f64>,
    pub overflow: Vec<f64>,
    /// Solids volume per class in the vessel at the start, m³.
    pub initial_inventory: Vec<f64>,
}

impl OutletLedger {
    pub fn new(initial_inventory: Vec<f64>) -> Self {
        let n = initial_inventory.len();
        OutletLedger {
            fed: vec![0.0; n],
            underflow: vec![0.0; n],
            overflow: vec![0.0; n],
            initial_inventory,
        }
    }

    /// Add the volumes (m³ per class) that crossed during one step.
    pub fn add(&mut self, fed: &[f64], underflow: &[f64], overflow: &[f64]) {
        for i in 0..self.fed.len() {
            self.fed[i] += fed[i];
            self.underflow[i] += underflow[i];
            self.overflow[i] += overflow[i];
        }
    }

    /// The outlet record at `time`: `inventory` is the solids volume per
    /// class in the vessel now (m³), `underflow_phi` and `overflow_phi` the
    /// volume fractions per class leaving through each outlet now, `blanket`
    /// the blanket level (m).
    pub fn sample(
        &self,
        op: &Operation,
        time: f64,
        inventory: &[f64],
        underflow_phi: &[f64],
        overflow_phi: &[f64],
        blanket: f64,
    ) -> OutletSample {
        let p = op.at(time);
        let rho = &op.class_density;
        let mass = |v: &[f64]| -> f64 { v.iter().zip(rho).map(|(a, r)| a * r).sum() };
        let conc = |phi: &[f64]| -> Vec<f64> { phi.iter().zip(rho).map(|(a, r)| a * r).collect() };
        let uc = conc(underflow_phi);
        let oc = conc(overflow_phi);
        let (u_total, o_total) = (uc.iter().sum::<f64>(), oc.iter().sum::<f64>());
        let feed_c = op.feed_concentration(time);
        let (fed, under, over) = (mass(&self.fed), mass(&self.underflow), mass(&self.overflow));
        let inv = mass(inventory);
        let inv0 = mass(&self.initial_inventory);
        // Per class first, then summed: each class's residual is a
        // difference of nearly equal terms only when that class is large.
        let residual: f64 = (0..rho.len())
            .map(|i| {
                rho[i]
                    * (self.fed[i]
                        - self.underflow[i]
                        - self.overflow[i]
                        - (inventory[i] - self.initial_inventory[i]))
            })
            .sum();
        OutletSample {
            time,
            feed_flow: p.feed_flow,
            underflow_flow: p.underflow_flow,
            overflow_flow: p.overflow_flow,
            feed_concentration: feed_c,
            underflow_concentration: u_total,
            overflow_concentration: o_total,
            underflow_concentration_by_class: uc,
            overflow_concentration_by_class: oc,
            feed_solids_rate: p.feed_flow * feed_c,
            underflow_solids_rate: p.underflow_flow * u_total,
            overflow_solids_rate: p.overflow_flow * o_total,
            blanket_level: blanket,
            solids_in: fed,
            solids_out_underflow: under,
            solids_out_overflow: over,
            inventory: inv,
            initial_inventory: inv0,
            balance_residual: residual,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn schedules_step_and_interpolate() {
        let s = Schedule::Steps(vec![(0.0, 1.0), (10.0, 3.0)]);
        assert_eq!(s.at(-1.0), 1.0);
        assert_eq!(s.at(9.999), 1.0);
        assert_eq!(s.at(10.0), 3.0);
        let t = Schedule::Table(vec![(0.0, 1.0), (10.0, 3.0), (20.0, 3.0)]);
        assert_eq!(t.at(5.0), 2.0);
        assert_eq!(t.at(25.0), 3.0);
        assert_eq!(t.breakpoints(), vec![0.0, 10.0, 20.0]);
    }

    #[test]
    fn bulk_velocities_follow_the_flows() {
        // Q_f = 0.1 m³/s, Q_u/Q_f = 0.3 on 50 m²: q_u = 0.03/50, q_e = 0.07/50.
        let op = Operation {
            area: 50.0,
            height: 4.0,
            feed_level: 2.0,
            feed_flow: Schedule::Constant(0.1),
            feed_solids: Schedule::Constant(0.002),
            underflow: Underflow::Ratio(Schedule::Constant(0.3)),
            feed_class_share: vec![0.25, 0.75],
            class_density: vec![2000.0, 3000.0],
            blanket_threshold: 0.01,
        };
        assert!((op.bulk_velocity(0.0, 1.0) - 0.03 / 50.0).abs() < 1e-18);
        assert!((op.bulk_velocity(0.0, 3.0) + 0.07 / 50.0).abs() < 1e-18);
        let mut f = [0.0; 2];
        op.feed_solids_flux(0.0, &mut f);
        assert!((f[0] + f[1] - 0.1 * 0.002 / 50.0).abs() < 1e-18);
        assert!((op.feed_concentration(0.0) - 0.002 * 2750.0).abs() < 1e-12);
        assert_eq!(op.next_change(0.0), None);
    }
}
