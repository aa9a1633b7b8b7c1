//! Random parameter values for sweeps: counter-based, so the value of a
//! parameter in sample k depends only on the seed, the parameter's key path
//! and k. Adding a parameter or more samples leaves the existing values as
//! they were, and the same sweep file expands to the same runs on any machine.

use serde::Deserialize;
use serde_yaml::Value;

/// A distribution for one parameter. Dimensional values carry their unit,
/// which must be the same for both parameters; the number is sampled and the
/// unit kept (`"98 µm"` → `"101.37… µm"`).
#[derive(Debug, Clone, Deserialize)]
#[serde(rename_all = "snake_case", deny_unknown_fields)]
pub enum Distribution {
    /// Uniform between `low` and `high`.
    Uniform { low: Value, high: Value },
    /// Normal (Gaussian) with mean and standard deviation.
    Normal { mean: Value, sd: Value },
    /// Log-normal: ln x is normal with ln(median) and ln(geometric_sd).
    LogNormal { median: Value, geometric_sd: f64 },
}

/// A number with an optional unit, as written in a scenario value.
#[derive(Debug, Clone, PartialEq)]
pub struct Quantity {
    pub value: f64,
    pub unit: Option<String>,
}

impl Quantity {
    pub fn from_yaml(v: &Value) -> Option<Quantity> {
        match v {
            Value::Number(n) => n.as_f64().map(|value| Quantity { value, unit: None }),
            Value::String(s) => {
                let (value, unit) = split_number(s)?;
                Some(Quantity {
                    value,
                    unit: (!unit.is_empty()).then(|| unit.to_string()),
                })
            }
            _ => None,
        }
    }
}

/// `"2.5e-3 mm"` → (0.0025, "mm"): the longest leading part that reads as a
/// finite number, then the rest, trimmed.
pub fn split_number(text: &str) -> Option<(f64, &str)> {
    let t = text.trim();
    let mut best = None;
    for (i, _) in t
        .char_indices()
        .skip(1)
        .chain(std::iter::once((t.len(), ' ')))
    {
        let head = &t[..i];
        if head.starts_with(|c: char| c.is_ascii_digit() || "+-.".contains(c))
            && let Ok(v) = head.trim().parse::<f64>()
            && v.is_finite()
        {
            best = Some((v, t[i..].trim()));
        }
    }
    best
}

impl Distribution {
    /// Check the parameters; returns the unit shared by the values.
    pub fn check(&self) -> Result<Option<String>, String> {
        let q = |v: &Value, what: &str| {
            Quantity::from_yaml(v).ok_or_else(|| {
                format!("`{what}` must be a number, or a number with its unit such as \"98 µm\"")
            })
        };
        let same_unit = |a: &Quantity, b: &Quantity, names: &str| {
            if a.unit == b.unit {
                Ok(a.unit.clone())
            } else {
                Err(format!(
                    "{names} must be in the same unit (found {} and {}); the number is sampled and the unit kept",
                    a.unit.as_deref().unwrap_or("none"),
                    b.unit.as_deref().unwrap_or("none")
                ))
            }
        };
        match self {
            Distribution::Uniform { low, high } => {
                let (l, h) = (q(low, "low")?, q(high, "high")?);
                let unit = same_unit(&l, &h, "`low` and `high`")?;
                if l.value >= h.value {
                    return Err(format!(
                        "`low` ({}) must be below `high` ({})",
                        l.value, h.value
                    ));
                }
                Ok(unit)
            }
            Distribution::Normal { mean, sd } => {
                let (m, s) = (q(mean, "mean")?, q(sd, "sd")?);
                let unit = same_unit(&m, &s, "`mean` and `sd`")?;
                if s.value < 0.0 {
                    return Err("`sd` must not be negative".into());
                }
                Ok(unit)
            }
            Distribution::LogNormal {
                median,
                geometric_sd,
            } => {
                let m = q(median, "median")?;
                if m.value <= 0.0 {
                    return Err("`median` of a log-normal distribution must be positive".into());
                }
                if !(geometric_sd.is_finite() && *geometric_sd >= 1.0) {
                    return Err(format!(
                        "`geometric_sd` must be at least 1 (a plain number; found {geometric_sd})"
                    ));
                }
                Ok(m.unit)
            }
        }
    }

    /// The number of sample `k` (the unit is the one [`Self::check`] returned).
    pub fn sample(&self, seed: u64, key: &str, k: u64) -> f64 {
        let num = |v: &Value| Quantity::from_yaml(v).map_or(f64::NAN, |q| q.value);
        match self {
            Distribution::Uniform { low, high } => {
                let (l, h) = (num(low), num(high));
                l + (h - l) * uniform(seed, key, k, 0)
            }
            Distribution::Normal { mean, sd } => {
                num(mean) + num(sd) * standard_normal(seed, key, k)
            }
            Distribution::LogNormal {
                median,
                geometric_sd,
            } => (num(median).ln() + geometric_sd.ln() * standard_normal(seed, key, k)).exp(),
        }
    }
}

/// SplitMix64's output function (Steele, Lea & Flood 2014): a bijective
/// mix of 64 bits in which every input bit affects every output bit.
fn mix(x: u64) -> u64 {
    let mut z = x.wrapping_add(0x9e37_79b9_7f4a_7c15);
    z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
    z ^ (z >> 31)
}

fn key_hash(key: &str) -> u64 {
    // FNV-1a over the key path.
    key.bytes().fold(0xcbf2_9ce4_8422_2325, |h, b| {
        (h ^ u64::from(b)).wrapping_mul(0x0000_0100_0000_01b3)
    })
}

/// A uniform number in the open interval (0, 1) for (seed, key, sample, draw).
pub fn uniform(seed: u64, key: &str, k: u64, draw: u64) -> f64 {
    let x = mix(mix(mix(mix(seed) ^ key_hash(key)) ^ k) ^ draw);
    // 53 random bits, centred in their cell: never exactly 0 or 1.
    ((x >> 11) as f64 + 0.5) * (1.0 / (1u64 << 53) as f64)
}

/// A standard normal number (Box–Muller transform of two uniforms).
pub fn standard_normal(seed: u64, key: &str, k: u64) -> f64 {
    let u1 = uniform(seed, key, k, 0);
    let u2 = uniform(seed, key, k, 1);
    (-2.0 * u1.ln()).sqrt() * (std::f64::consts::TAU * u2).cos()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn stats(x: &[f64]) -> (f64, f64) {
        let n = x.len() as f64;
        let m = x.iter().sum::<f64>() / n;
        let v = x.iter().map(|v| (v - m).powi(2)).sum::<f64>() / (n - 1.0);
        (m, v.sqrt())
    }

    const N: u64 = 20_000;

    #[test]
    fn uniform_samples_have_the_moments_of_the_distribution() {
        // Exact: uniform on [2, 5] has mean 3.5 and sd 3/√12. The sample mean
        // is within 5 standard errors with probability 1 − 6e-7 (normal limit).
        let d = Distribution::Uniform {
            low: Value::String("2 mm".into()),
            high: Value::String("5 mm".into()),
        };
        assert_eq!(d.check().unwrap().as_deref(), Some("mm"));
        let x: Vec<f64> = (0..N).map(|k| d.sample(7, "a.b", k)).collect();
        let (m, s) = stats(&x);
        let sd = 3.0 / 12f64.sqrt();
        assert!((m - 3.5).abs() < 5.0 * sd / (N as f64).sqrt(), "{m}");
        // sd of the sample sd ≈ sd·√((κ−1)/4N) with kurtosis κ = 1.8 (uniform).
        assert!(
            (s - sd).abs() < 5.0 * sd * (0.8 / (4.0 * N as f64)).sqrt(),
            "{s}"
        );
        assert!(x.iter().all(|v| (2.0..5.0).contains(v)));
    }

    #[test]
    fn normal_and_log_normal_samples_have_the_moments_of_the_distribution() {
        // Exact: mean 20, sd 2; standard errors sd/√N and sd/√(2N).
        let d = Distribution::Normal {
            mean: Value::String("20 °C".into()),
            sd: Value::String("2 °C".into()),
        };
        let x: Vec<f64> = (0..N).map(|k| d.sample(1, "t", k)).collect();
        let (m, s) = stats(&x);
        let n = N as f64;
        assert!((m - 20.0).abs() < 5.0 * 2.0 / n.sqrt(), "{m}");
        assert!((s - 2.0).abs() < 5.0 * 2.0 / (2.0 * n).sqrt(), "{s}");
        // Log-normal: ln x is normal with mean ln 98 and sd ln 1.5 (definition).
        let d = Distribution::LogNormal {
            median: Value::String("98 µm".into()),
            geometric_sd: 1.5,
        };
        let y: Vec<f64> = (0..N).map(|k| d.sample(1, "d", k).ln()).collect();
        let (m, s) = stats(&y);
        let sl = 1.5f64.ln();
        assert!((m - 98f64.ln()).abs() < 5.0 * sl / n.sqrt(), "{m}");
        assert!((s - sl).abs() < 5.0 * sl / (2.0 * n).sqrt(), "{s}");
    }

    #[test]
    fn streams_differ_by_key_and_seed_and_repeat_exactly() {
        assert_eq!(uniform(3, "x", 5, 0), uniform(3, "x", 5, 0));
        assert_ne!(uniform(3, "x", 5, 0), uniform(3, "y", 5, 0));
        assert_ne!(uniform(3, "x", 5, 0), uniform(4, "x", 5, 0));
        assert_ne!(uniform(3, "x", 5, 0), uniform(3, "x", 6, 0));
    }

    #[test]
    fn bad_parameters_are_refused_with_reasons() {
        let s = |t: &str| Value::String(t.into());
        let e = Distribution::Uniform {
            low: s("2 mm"),
            high: s("5 µm"),
        }
        .check()
        .unwrap_err();
        assert!(e.contains("same unit"), "{e}");
        let e = Distribution::Uniform {
            low: s("5 mm"),
            high: s("2 mm"),
        }
        .check()
        .unwrap_err();
        assert!(e.contains("below"), "{e}");
        let e = Distribution::LogNormal {
            median: s("98 µm"),
            geometric_sd: 0.5,
        }
        .check()
        .unwrap_err();
        assert!(e.contains("at least 1"), "{e}");
        assert_eq!(split_number("10 vol%"), Some((10.0, "vol%")));
        assert_eq!(split_number("2.5e-3mm"), Some((2.5e-3, "mm")));
        assert_eq!(split_number("auto"), None);
    }
}
