//! Particle size distributions (by volume) and their split into size classes.

/// A size distribution by volume, sizes in m, shares as fractions.
#[derive(Debug, Clone, PartialEq)]
pub enum Distribution {
    Single(f64),
    LogNormal {
        median: f64,
        geometric_sd: f64,
    },
    RosinRammler {
        size_63: f64,
        spread: f64,
    },
    /// (size, fraction passing), sizes strictly increasing, last fraction 1.
    Table(Vec<(f64, f64)>),
}

/// One size class: its bounds, the diameter that stands for it, and its share
/// of the species' solids volume.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ClassShare {
    pub lower: f64,
    pub upper: f64,
    pub diameter: f64,
    pub volume_share: f64,
}

/// Normal-distribution tails beyond ±3σ (0.27 % of the volume) are lumped into
/// the end classes rather than given classes of their own.
const LOG_NORMAL_SPAN_SIGMAS: f64 = 3.0;
/// Rosin–Rammler classes cover 0.1 %–99.9 % passing; the rest goes to the end classes.
const RR_TAIL: f64 = 1e-3;
/// Sub-intervals per class for the representative diameter.
const SUBSTEPS: usize = 64;

/// Error function, to double precision for the range used here.
///
/// For |x| < 3 the positive series erf x = (2/√π) e^(−x²) Σ 2ⁿ x^(2n+1)/(2n+1)!!
/// (Abramowitz & Stegun 7.1.6) has no cancellation; beyond, the continued
/// fraction for erfc (A&S 7.1.14) converges quickly.
pub fn erf(x: f64) -> f64 {
    if x < 0.0 {
        return -erf(-x);
    }
    if x < 3.0 {
        let x2 = x * x;
        let mut term = x;
        let mut sum = x;
        let mut n = 0.0;
        while term > sum * 1e-17 {
            n += 1.0;
            term *= 2.0 * x2 / (2.0 * n + 1.0);
            sum += term;
        }
        2.0 / std::f64::consts::PI.sqrt() * (-x2).exp() * sum
    } else {
        // erfc x = e^(−x²)/√π · 1/(x + (1/2)/(x + 1/(x + (3/2)/(x + 2/(x + …)))))
        let mut f = x;
        for k in (1..60).rev() {
            f = x + (k as f64 / 2.0) / f;
        }
        1.0 - (-x * x).exp() / (std::f64::consts::PI.sqrt() * f)
    }
}

/// Standard normal cumulative distribution.
pub fn normal_cdf(z: f64) -> f64 {
    0.5 * (1.0 + erf(z / std::f64::consts::SQRT_2))
}

impl Distribution {
    /// Fraction of the volume finer than `d`.
    pub fn passing(&self, d: f64) -> f64 {
        match self {
            Distribution::Single(s) => {
                if d >= *s {
                    1.0
                } else {
                    0.0
                }
            }
            Distribution::LogNormal {
                median,
                geometric_sd,
            } => {
                if d <= 0.0 {
                    0.0
                } else {
                    normal_cdf((d / median).ln() / geometric_sd.ln())
                }
            }
            Distribution::RosinRammler { size_63, spread } => {
                if d <= 0.0 {
                    0.0
                } else {
                    1.0 - (-(d / size_63).powf(*spread)).exp()
                }
            }
            Distribution::Table(rows) => {
                // Linear in log size between points (common practice for sieve data);
                // below the finest size, the "pan" fraction sits at that size.
                let (d0, f0) = rows[0];
                if d < d0 {
                    return 0.0;
                }
                for w in rows.windows(2) {
                    let ((da, fa), (db, fb)) = (w[0], w[1]);
                    if d <= db {
                        let s = (d / da).ln() / (db / da).ln();
                        return fa + s * (fb - fa);
                    }
                }
                let _ = f0;
                1.0
            }
        }
    }

    /// Size span that gets its own classes.
    pub fn span(&self) -> (f64, f64) {
        match self {
            Distribution::Single(s) => (*s, *s),
            Distribution::LogNormal {
                median,
                geometric_sd,
            } => {
                let f = geometric_sd.powf(LOG_NORMAL_SPAN_SIGMAS);
                (median / f, median * f)
            }
            Distribution::RosinRammler { size_63, spread } => {
                let q = |p: f64| size_63 * (-(1.0 - p).ln()).powf(1.0 / spread);
                (q(RR_TAIL), q(1.0 - RR_TAIL))
            }
            Distribution::Table(rows) => (rows[0].0, rows[rows.len() - 1].0),
        }
    }

    /// Split into `n` classes with log-spaced bounds over [`Self::span`],
    /// narrowed to `limits` (the sizes the physics covers).
    ///
    /// The volume outside the span is added to the end classes, so the shares
    /// sum to one. Each class is represented by the diameter whose square is the
    /// volume-weighted mean of d² in the class: in Stokes flow the class then
    /// settles with its true mean velocity. Empty classes are dropped.
    pub fn classes(&self, n: usize, limits: (f64, f64)) -> Vec<ClassShare> {
        if let Distribution::Single(s) = self {
            return vec![ClassShare {
                lower: *s,
                upper: *s,
                diameter: *s,
                volume_share: 1.0,
            }];
        }
        let n = n.max(1);
        let (lo, hi) = self.span();
        let (lo, hi) = (lo.max(limits.0), hi.min(limits.1));
        if lo >= hi {
            return Vec::new(); // nothing of the distribution lies within the limits
        }
        let edge = |i: usize| lo * (hi / lo).powf(i as f64 / n as f64);
        let mut out = Vec::with_capacity(n);
        for i in 0..n {
            let (a, b) = (edge(i), edge(i + 1));
            let mut share = self.passing(b) - self.passing(a);
            let mut d2_sum = 0.0;
            let mut f_sum = 0.0;
            for k in 0..SUBSTEPS {
                let sa = a * (b / a).powf(k as f64 / SUBSTEPS as f64);
                let sb = a * (b / a).powf((k + 1) as f64 / SUBSTEPS as f64);
                let df = self.passing(sb) - self.passing(sa);
                d2_sum += df * sa * sb; // geometric midpoint squared
                f_sum += df;
            }
            let diameter = if f_sum > 0.0 {
                (d2_sum / f_sum).sqrt()
            } else {
                (a * b).sqrt()
            };
            if i == 0 {
                share += self.passing(lo);
            }
            if i == n - 1 {
                share += 1.0 - self.passing(hi);
            }
            out.push(ClassShare {
                lower: a,
                upper: b,
                diameter,
                volume_share: share,
            });
        }
        out.retain(|c| c.volume_share > 1e-12);
        let total: f64 = out.iter().map(|c| c.volume_share).sum();
        for c in &mut out {
            c.volume_share /= total;
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const FULL: (f64, f64) = (0.0, f64::INFINITY);

    #[test]
    fn limits_lump_the_tails_into_the_end_classes() {
        let d = Distribution::RosinRammler {
            size_63: 60e-6,
            spread: 0.9,
        };
        let cls = d.classes(8, (0.1e-6, 0.1));
        assert!((cls[0].lower - 0.1e-6).abs() < 1e-20);
        // The first class holds everything finer than its upper bound.
        assert!((cls[0].volume_share - d.passing(cls[0].upper)).abs() < 1e-12);
        let total: f64 = cls.iter().map(|c| c.volume_share).sum();
        assert!((total - 1.0).abs() < 1e-14);
    }

    #[test]
    fn erf_matches_tabulated_values() {
        // erf(0.5), erf(1), erf(2), erf(3.5): Abramowitz & Stegun Table 7.1 (to 10+ digits).
        assert!((erf(0.5) - 0.520_499_877_813_046_5).abs() < 1e-15);
        assert!((erf(1.0) - 0.842_700_792_949_714_9).abs() < 1e-15);
        assert!((erf(2.0) - 0.995_322_265_018_952_7).abs() < 1e-15);
        assert!((erf(3.5) - 0.999_999_256_901_627_7).abs() < 1e-15);
        // Φ(1) = 0.841344746… (standard normal table).
        assert!((normal_cdf(1.0) - 0.841_344_746_068_543).abs() < 1e-14);
    }

    #[test]
    fn log_normal_classes_conserve_volume_and_bracket_the_median() {
        let d = Distribution::LogNormal {
            median: 50e-6,
            geometric_sd: 2.0,
        };
        let cls = d.classes(8, FULL);
        assert_eq!(cls.len(), 8);
        let total: f64 = cls.iter().map(|c| c.volume_share).sum();
        assert!((total - 1.0).abs() < 1e-14);
        // Symmetric in log d about the median: shares mirror each other.
        for i in 0..4 {
            assert!((cls[i].volume_share - cls[7 - i].volume_share).abs() < 1e-12);
        }
        // Exact share of the two middle classes: each edge step is 6σ/8 = 0.75σ,
        // so the middle pair holds Φ(0.75) − Φ(−0.75) = 0.546745…
        let mid = cls[3].volume_share + cls[4].volume_share;
        assert!((mid - (2.0 * normal_cdf(0.75) - 1.0)).abs() < 1e-12);
        assert!((2.0 * normal_cdf(0.75) - 1.0 - 0.546_745).abs() < 1e-6); // normal table
        for c in &cls {
            assert!(c.lower <= c.diameter && c.diameter <= c.upper);
        }
    }

    #[test]
    fn rosin_rammler_passes_63_percent_at_its_size() {
        let d = Distribution::RosinRammler {
            size_63: 100e-6,
            spread: 1.5,
        };
        assert!((d.passing(100e-6) - (1.0 - (-1.0f64).exp())).abs() < 1e-15);
        let total: f64 = d.classes(10, FULL).iter().map(|c| c.volume_share).sum();
        assert!((total - 1.0).abs() < 1e-14);
    }

    #[test]
    fn table_interpolates_in_log_size() {
        let d = Distribution::Table(vec![(10e-6, 0.2), (40e-6, 0.6), (160e-6, 1.0)]);
        // Halfway in log between 10 and 40 µm is 20 µm: 0.2 + 0.5·0.4.
        assert!((d.passing(20e-6) - 0.4).abs() < 1e-14);
        let cls = d.classes(2, FULL);
        // Edges 10, 40, 160 µm: the pan fraction 0.2 joins the first class.
        assert!((cls[0].volume_share - 0.6).abs() < 1e-14);
        assert!((cls[1].volume_share - 0.4).abs() < 1e-14);
    }
}
