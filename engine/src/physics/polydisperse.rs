//! Polydisperse hindered settling: the Masliyah–Lockett–Bassoon (MLB) slip law
//! with the closure of a closed batch vessel.
//!
//! Settling velocities are positive downward throughout.
//!
//! The MLB assumption (Masliyah 1979; Lockett & Bassoon 1979, in the form used
//! by Bürger et al. 2002 and Berres et al. 2003): the slip of class i relative
//! to the fluid is driven by its density excess over the local *suspension*,
//!
//! ```text
//! u_i − u_f = v_i · (1 − ρ̄ᵀΦ / ρ̄_i) · V_i(φ),      ρ̄_k = ρ_k − ρ_f,  ρ̄ᵀΦ = Σ ρ̄_k φ_k
//! ```
//!
//! where the papers use the Stokes velocity for v_i and V(φ) = (1 − φ)^(n−2).
//! turbid writes v_i·V_i(φ) = w_i(φ)/(1 − φ)², with w_i(φ) the class's
//! *monodisperse* hindered settling velocity from the chosen law and drag law.
//! For Richardson–Zaki with Stokes drag this is exactly the papers' form, and
//! for a single species it returns that law exactly (see the tests), so coarse
//! grains get their drag-law velocity rather than Stokes'.
//!
//! A closed vessel has zero volume-average velocity, Σ φ_k u_k + (1 − φ) u_f = 0,
//! which gives the fluid's return flow u_f = −Σ φ_k (u_k − u_f).

/// Slip velocity of one class relative to the fluid, m/s (positive down).
///
/// * `monodisperse` — the class's hindered settling velocity w(φ) in a
///   suspension of its own kind at the local total volume fraction `phi`;
/// * `particle_excess` — ρ_i − ρ_f of this class, kg/m³ (> 0);
/// * `mixture_excess` — ρ̄ᵀΦ = Σ (ρ_k − ρ_f) φ_k of the local suspension, kg/m³.
///
/// Negative when the particle is lighter than the suspension around it
/// (it then rises relative to the fluid).
pub fn mlb_slip(monodisperse: f64, phi: f64, particle_excess: f64, mixture_excess: f64) -> f64 {
    let voidage = 1.0 - phi;
    monodisperse * (1.0 - mixture_excess / particle_excess) / (voidage * voidage)
}

/// Return flow of the fluid in a closed vessel, m/s (positive down; it is
/// upward, hence negative, while solids settle): u_f = −Σ φ_k slip_k.
pub fn return_flow(phis: &[f64], slips: &[f64]) -> f64 {
    -phis.iter().zip(slips).map(|(p, s)| p * s).sum::<f64>()
}

/// Settling velocities of all classes relative to the vessel in a closed batch
/// vessel, m/s (positive down), from the local per-class volume fractions.
///
/// `monodisperse(i, phi)` gives class i's hindered velocity at total fraction
/// `phi`; `excess[i]` is ρ_i − ρ_f.
pub fn batch_velocities(
    phis: &[f64],
    excess: &[f64],
    monodisperse: impl Fn(usize, f64) -> f64,
) -> Vec<f64> {
    let phi: f64 = phis.iter().sum();
    let mix: f64 = phis.iter().zip(excess).map(|(p, e)| p * e).sum();
    let slips: Vec<f64> = (0..phis.len())
        .map(|i| mlb_slip(monodisperse(i, phi), phi, excess[i], mix))
        .collect();
    let uf = return_flow(phis, &slips);
    slips.iter().map(|s| s + uf).collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    // Richardson–Zaki with n = 4.65 and v_t = 1 mm/s, as a closure.
    fn rz(v_t: f64, n: f64) -> impl Fn(usize, f64) -> f64 {
        move |_, phi| v_t * (1.0 - phi).powf(n)
    }

    #[test]
    fn one_species_reduces_to_its_monodisperse_law() {
        // Exact algebra (physics sheet §4.1 and §9 #22): the bracket collapses to
        // ρ̄(1 − φ)², so MLB gives back w(φ) to round-off.
        for phi in [0.0, 0.1, 0.3, 0.55] {
            let v = batch_velocities(&[phi], &[1650.0], rz(1e-3, 4.65));
            let expect = 1e-3 * (1.0 - phi).powf(4.65);
            assert!(
                (v[0] - expect).abs() <= 1e-15 * expect.max(1e-300),
                "φ = {phi}"
            );
        }
        // §9 #22: φ = 0.1, n = 4.65 → v/v_t = 0.9^4.65 = 0.612671…
        let v = batch_velocities(&[0.1], &[1650.0], rz(1.0, 4.65));
        assert!((v[0] - 0.612_671).abs() < 1e-6);
    }

    #[test]
    fn volume_average_velocity_vanishes() {
        // The closure of a closed vessel: Σ φ_k u_k + (1 − φ) u_f = 0.
        let phis = [0.12, 0.05, 0.02];
        let excess = [1650.0, 1650.0, 4000.0];
        let mono = |i: usize, phi: f64| [3e-3, 1e-3, 2e-3][i] * (1.0 - phi).powf(4.5);
        let v = batch_velocities(&phis, &excess, mono);
        let phi: f64 = phis.iter().sum();
        let mix: f64 = phis.iter().zip(&excess).map(|(p, e)| p * e).sum();
        let slips: Vec<f64> = (0..3)
            .map(|i| mlb_slip(mono(i, phi), phi, excess[i], mix))
            .collect();
        let uf = return_flow(&phis, &slips);
        let flux: f64 = phis.iter().zip(&v).map(|(p, u)| p * u).sum::<f64>() + (1.0 - phi) * uf;
        assert!(flux.abs() < 1e-18, "net volume flux {flux}");
    }

    #[test]
    fn equal_density_bidisperse_matches_the_closed_form() {
        // Equal densities (physics sheet §4.1): f_i = v_St,1 φ_i (1 − φ)^(n−1) (δ_i − Σ δ_k φ_k),
        // so u_i = v_St,1 (1 − φ)^(n−1) (δ_i − Σ δ_k φ_k) with δ_i = d_i²/d_1².
        let (n, v1) = (4.7, 2e-3);
        let delta = [1.0, 0.25];
        let phis = [0.2, 0.05];
        let phi: f64 = phis.iter().sum();
        let mono = |i: usize, p: f64| v1 * delta[i] * (1.0 - p).powf(n);
        let v = batch_velocities(&phis, &[1000.0, 1000.0], mono);
        let sum_dp = delta[0] * phis[0] + delta[1] * phis[1];
        for i in 0..2 {
            let expect = v1 * (1.0 - phi).powf(n - 1.0) * (delta[i] - sum_dp);
            assert!(
                (v[i] - expect).abs() < 1e-15,
                "class {i}: {} vs {expect}",
                v[i]
            );
        }
    }

    #[test]
    fn light_fines_can_rise_in_a_dense_heavy_suspension() {
        // A class lighter than the suspension around it is pushed up.
        let phis = [0.3, 0.01];
        let excess = [4000.0, 500.0]; // heavy coarse, light fines: ρ̄ᵀΦ = 1205 > 500
        let v = batch_velocities(&phis, &excess, |_, p| 1e-3 * (1.0 - p).powf(4.65));
        assert!(v[1] < 0.0 && v[0] > 0.0, "{v:?}");
    }
}
