//! The Student t distribution for confidence intervals.
//!
//! For integer degrees of freedom ν the two-sided probability
//! A(t|ν) = P(|T| ≤ t) is a finite trigonometric series in
//! θ = arctan(t/√ν) (Abramowitz & Stegun 1964, eqs. 26.7.3–26.7.4 [M]):
//!
//! ```text
//!   ν = 1:     A = 2θ/π
//!   ν odd:     A = (2/π) [θ + sin θ (cos θ + (2/3) cos³θ + … + (2·4…(ν−3))/(1·3…(ν−2)) cos^(ν−2)θ)]
//!   ν even:    A = sin θ [1 + (1/2) cos²θ + (1·3)/(2·4) cos⁴θ + … + (1·3…(ν−3))/(2·4…(ν−2)) cos^(ν−2)θ]
//! ```
//!
//! (ν = 2 gives A = t/√(2 + t²) and ν = 3 the familiar closed forms, which
//! is how the series were checked). A is increasing in θ, so a quantile is
//! found by bisection on θ ∈ (0, π/2), then t = √ν tan θ. The values are
//! checked against scipy in `tests/data/student_t_quantiles.csv`.

/// P(|T| ≤ t) for Student's t with `nu` ≥ 1 degrees of freedom.
pub fn two_sided_probability(t: f64, nu: u32) -> f64 {
    assert!(nu >= 1, "Student t needs at least one degree of freedom");
    let theta = (t.abs() / f64::from(nu).sqrt()).atan();
    probability_at_angle(theta, nu)
}

fn probability_at_angle(theta: f64, nu: u32) -> f64 {
    let (s, c) = theta.sin_cos();
    let c2 = c * c;
    if nu % 2 == 1 {
        // Σ_{j=0}^{(ν−3)/2} a_j cos^(2j+1)θ, a_0 = 1, a_j = a_{j−1}·2j/(2j+1).
        let mut sum = 0.0;
        if nu >= 3 {
            let mut term = c;
            sum = term;
            for j in 1..=(nu - 3) / 2 {
                term *= c2 * (2 * j) as f64 / (2 * j + 1) as f64;
                sum += term;
            }
        }
        2.0 / std::f64::consts::PI * (theta + s * sum)
    } else {
        // Σ_{j=0}^{(ν−2)/2} b_j cos^(2j)θ, b_0 = 1, b_j = b_{j−1}(2j−1)/(2j).
        let mut term = 1.0;
        let mut sum = 1.0;
        for j in 1..=(nu - 2) / 2 {
            term *= c2 * (2 * j - 1) as f64 / (2 * j) as f64;
            sum += term;
        }
        s * sum
    }
}

/// Quantile t_p of Student's t with `nu` degrees of freedom: P(T ≤ t_p) = p,
/// for 0.5 ≤ p < 1 (e.g. p = 0.975 for a two-sided 95 % interval).
pub fn quantile(p: f64, nu: u32) -> f64 {
    assert!(
        (0.5..1.0).contains(&p),
        "quantile level {p} not in [0.5, 1)"
    );
    let target = 2.0 * p - 1.0;
    let (mut a, mut b) = (0.0f64, std::f64::consts::FRAC_PI_2);
    for _ in 0..200 {
        let m = 0.5 * (a + b);
        if probability_at_angle(m, nu) < target {
            a = m;
        } else {
            b = m;
        }
        if b - a <= f64::EPSILON * b {
            break;
        }
    }
    f64::from(nu).sqrt() * (0.5 * (a + b)).tan()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn closed_forms_for_one_and_two_degrees_of_freedom() {
        // ν = 1 is the Cauchy distribution: t_p = tan(π (p − 1/2)).
        let p = 0.975;
        let exact = (std::f64::consts::PI * (p - 0.5)).tan();
        assert!((quantile(p, 1) - exact).abs() < 1e-10 * exact);
        // ν = 2: t_p = (2p − 1) √(2 / (1 − (2p − 1)²)).
        let a: f64 = 2.0 * p - 1.0;
        let exact = a * (2.0 / (1.0 - a * a)).sqrt();
        assert!((quantile(p, 2) - exact).abs() < 1e-12 * exact);
    }
}
