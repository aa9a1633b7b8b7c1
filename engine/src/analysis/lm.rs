//! Levenberg–Marquardt least squares with finite-difference Jacobians.
//!
//! Minimises ½‖r(x)‖² for a residual function r: ℝᵖ → ℝᴺ (Levenberg 1944,
//! Marquardt 1963 [M]). Each iteration solves
//!
//! ```text
//!   (JᵀJ + λ·diag(JᵀJ)) δ = −Jᵀr
//! ```
//!
//! (Marquardt's scaling, so the damping does not depend on the units of
//! x); a step that lowers the cost is taken and λ divided by 10, otherwise
//! λ is multiplied by 10 and the step retried. J is built by forward or
//! central differences with step `fd_step·max(|x_j|, 1)`: when the model is
//! a numerical solver whose output is smooth only to about its own
//! discretisation, the step must be large enough to average over that. Iteration stops
//! when the cost falls by less than `tolerance` (relative) in an accepted
//! step, when a step changes every x_j by less than `tolerance·max(|x_j|, 1)`,
//! when λ exceeds 1e10 (no step lowers the cost: a minimum to the model's
//! resolution), or after `max_iterations`.

use super::AnalysisError;

/// Settings of the solver.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LmOptions {
    pub max_iterations: usize,
    pub tolerance: f64,
    pub fd_step: f64,
    /// Central instead of forward differences (2p instead of p model runs
    /// per Jacobian, error O(h²) instead of O(h)).
    pub central: bool,
}

impl Default for LmOptions {
    fn default() -> Self {
        LmOptions {
            max_iterations: 60,
            tolerance: 1e-8,
            fd_step: 1e-4,
            central: false,
        }
    }
}

/// What the solver found.
#[derive(Debug, Clone, PartialEq)]
pub struct LmResult {
    pub x: Vec<f64>,
    pub residuals: Vec<f64>,
    /// Jacobian at `x`, row-major N × p.
    pub jacobian: Vec<Vec<f64>>,
    /// ½‖r‖².
    pub cost: f64,
    pub iterations: usize,
    pub evaluations: usize,
    /// False only when the iteration limit was reached.
    pub converged: bool,
    pub stop: StopReason,
}

/// Why the iteration stopped.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum StopReason {
    /// An accepted step changed no parameter by more than the tolerance.
    SmallStep,
    /// An accepted step lowered the cost by less than the tolerance.
    SmallGain,
    /// No step lowers the cost any more (λ > 1e10): a minimum to the
    /// model's resolution, or a point where the model is not smooth.
    NoDescent,
    MaxIterations,
}

fn cost(r: &[f64]) -> f64 {
    0.5 * r.iter().map(|v| v * v).sum::<f64>()
}

/// Finite-difference Jacobian of `f` at `x` (with r = f(x) known), forward
/// or central.
pub fn jacobian<F>(
    f: &mut F,
    x: &[f64],
    r: &[f64],
    fd_step: f64,
    central: bool,
    evaluations: &mut usize,
) -> Result<Vec<Vec<f64>>, AnalysisError>
where
    F: FnMut(&[f64]) -> Result<Vec<f64>, AnalysisError>,
{
    let p = x.len();
    let mut jac = vec![vec![0.0; p]; r.len()];
    for j in 0..p {
        let h = fd_step * x[j].abs().max(1.0);
        let mut xp = x.to_vec();
        xp[j] += h;
        let rp = f(&xp)?;
        *evaluations += 1;
        if central {
            let mut xm = x.to_vec();
            xm[j] -= h;
            let rm = f(&xm)?;
            *evaluations += 1;
            for (row, (a, b)) in jac.iter_mut().zip(rp.iter().zip(&rm)) {
                row[j] = (a - b) / (2.0 * h);
            }
        } else {
            for (row, (a, b)) in jac.iter_mut().zip(rp.iter().zip(r)) {
                row[j] = (a - b) / h;
            }
        }
    }
    Ok(jac)
}

/// JᵀJ (p × p) and Jᵀr.
pub fn normal_equations(jac: &[Vec<f64>], r: &[f64]) -> (Vec<Vec<f64>>, Vec<f64>) {
    let p = jac.first().map_or(0, |row| row.len());
    let mut a = vec![vec![0.0; p]; p];
    let mut g = vec![0.0; p];
    for (row, &ri) in jac.iter().zip(r) {
        for i in 0..p {
            g[i] += row[i] * ri;
            for j in 0..p {
                a[i][j] += row[i] * row[j];
            }
        }
    }
    (a, g)
}

/// Solve A x = b by Gaussian elimination with partial pivoting; None if A is
/// singular to working precision.
pub fn solve(a: &[Vec<f64>], b: &[f64]) -> Option<Vec<f64>> {
    let n = b.len();
    let mut m: Vec<Vec<f64>> = a.to_vec();
    let mut x = b.to_vec();
    let scale = a.iter().flatten().fold(0.0f64, |s, v| s.max(v.abs()));
    for c in 0..n {
        let p = (c..n).max_by(|&i, &j| m[i][c].abs().total_cmp(&m[j][c].abs()))?;
        if m[p][c].abs() <= 1e-14 * scale || !m[p][c].is_finite() {
            return None;
        }
        m.swap(c, p);
        x.swap(c, p);
        let pivot = m[c].clone();
        for i in c + 1..n {
            let f = m[i][c] / pivot[c];
            for (v, p) in m[i][c..n].iter_mut().zip(&pivot[c..n]) {
                *v -= f * p;
            }
            x[i] -= f * x[c];
        }
    }
    for c in (0..n).rev() {
        let s: f64 = (c + 1..n).map(|j| m[c][j] * x[j]).sum();
        x[c] = (x[c] - s) / m[c][c];
    }
    Some(x)
}

/// Inverse of a small matrix (columns by [`solve`]).
pub fn inverse(a: &[Vec<f64>]) -> Option<Vec<Vec<f64>>> {
    let n = a.len();
    let mut inv = vec![vec![0.0; n]; n];
    for j in 0..n {
        let mut e = vec![0.0; n];
        e[j] = 1.0;
        let col = solve(a, &e)?;
        for i in 0..n {
            inv[i][j] = col[i];
        }
    }
    Some(inv)
}

/// Minimise ½‖f(x)‖² from `x0`.
pub fn levenberg_marquardt<F>(
    mut f: F,
    x0: &[f64],
    options: &LmOptions,
) -> Result<LmResult, AnalysisError>
where
    F: FnMut(&[f64]) -> Result<Vec<f64>, AnalysisError>,
{
    let mut x = x0.to_vec();
    let mut r = f(&x)?;
    let mut evaluations = 1;
    if r.iter().any(|v| !v.is_finite()) {
        return Err(AnalysisError::Fit {
            message: "the residuals at the initial guess are not finite".into(),
            hint: "give an initial guess closer to the data".into(),
        });
    }
    let mut c = cost(&r);
    let mut lambda = 1e-3;
    let mut stop = StopReason::MaxIterations;
    let mut iterations = 0;
    'outer: while iterations < options.max_iterations {
        iterations += 1;
        let jac = jacobian(
            &mut f,
            &x,
            &r,
            options.fd_step,
            options.central,
            &mut evaluations,
        )?;
        let (a, g) = normal_equations(&jac, &r);
        loop {
            let mut damped = a.clone();
            for (i, row) in damped.iter_mut().enumerate() {
                row[i] += lambda * a[i][i].max(1e-300);
            }
            let neg_g: Vec<f64> = g.iter().map(|v| -v).collect();
            let Some(delta) = solve(&damped, &neg_g) else {
                lambda *= 10.0;
                if lambda > 1e10 {
                    stop = StopReason::NoDescent;
                    break 'outer;
                }
                continue;
            };
            let trial: Vec<f64> = x.iter().zip(&delta).map(|(a, b)| a + b).collect();
            let trial_r = f(&trial);
            evaluations += 1;
            let trial_r = match trial_r {
                Ok(r) if r.iter().all(|v| v.is_finite()) => r,
                _ => {
                    lambda *= 10.0;
                    if lambda > 1e10 {
                        stop = StopReason::NoDescent;
                        break 'outer;
                    }
                    continue;
                }
            };
            let tc = cost(&trial_r);
            if tc < c {
                let small_step = delta
                    .iter()
                    .zip(&x)
                    .all(|(d, xi)| d.abs() <= options.tolerance * xi.abs().max(1.0));
                let small_gain = c - tc <= options.tolerance * c;
                x = trial;
                r = trial_r;
                c = tc;
                lambda = (lambda / 10.0).max(1e-12);
                if small_step || small_gain {
                    stop = if small_step {
                        StopReason::SmallStep
                    } else {
                        StopReason::SmallGain
                    };
                    break 'outer;
                }
                break;
            }
            lambda *= 10.0;
            if lambda > 1e10 {
                stop = StopReason::NoDescent;
                break 'outer;
            }
        }
    }
    let jac = jacobian(
        &mut f,
        &x,
        &r,
        options.fd_step,
        options.central,
        &mut evaluations,
    )?;
    Ok(LmResult {
        x,
        residuals: r,
        jacobian: jac,
        cost: c,
        iterations,
        evaluations,
        converged: stop != StopReason::MaxIterations,
        stop,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fits_an_exponential_decay_exactly() {
        // y = 2 e^(−0.3 t) sampled without noise: the minimum is the truth.
        let t: Vec<f64> = (0..20).map(|i| i as f64 * 0.5).collect();
        let y: Vec<f64> = t.iter().map(|t| 2.0 * (-0.3 * t).exp()).collect();
        let res = levenberg_marquardt(
            |p: &[f64]| {
                Ok(t.iter()
                    .zip(&y)
                    .map(|(t, y)| p[0] * (-p[1] * t).exp() - y)
                    .collect())
            },
            &[1.0, 1.0],
            &LmOptions {
                fd_step: 1e-7,
                tolerance: 1e-12,
                ..LmOptions::default()
            },
        )
        .unwrap();
        assert!(
            (res.x[0] - 2.0).abs() < 1e-6 && (res.x[1] - 0.3).abs() < 1e-6,
            "{:?}",
            res.x
        );
    }
}
