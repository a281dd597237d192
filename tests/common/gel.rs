//! Closed-form equilibria of polymer gels (neo-Hookean network plus Flory–Huggins mixing with
//! molecular incompressibility), solved by bisection, for the finite-strain tests. Free energy
//! per dry volume of Hong, Zhao, Zhou & Suo (J. Mech. Phys. Solids 56 (2008) 1779, eq. 2.6;
//! equation numbers from memory), `Nv = G Ω / RT`; docs/theory.md §14 derives every formula.

/// Bisection for the root of `f` in `[lo, hi]` (f changes sign there), to round-off.
pub fn bisect(f: impl Fn(f64) -> f64, mut lo: f64, mut hi: f64) -> f64 {
    let flo = f(lo);
    assert!(flo * f(hi) < 0.0, "no sign change in [{lo}, {hi}]");
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if (f(mid) > 0.0) == (flo > 0.0) {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    0.5 * (lo + hi)
}

/// `μ/RT` of free swelling at the isotropic stretch `λ` from dry:
/// `Nv(1/λ − 1/λ³) + ln(1 − λ⁻³) + λ⁻³ + χ λ⁻⁶` (Hong et al. 2008, eq. 3.3).
pub fn free_potential_over_rt(nv: f64, chi: f64, l: f64) -> f64 {
    let l3 = l.powi(-3);
    nv * (1.0 / l - l3) + (1.0 - l3).ln() + l3 + chi * l3 * l3
}

/// Free-swelling stretch in a pure solvent (μ = 0): the root of [`free_potential_over_rt`].
pub fn free_stretch(nv: f64, chi: f64) -> f64 {
    bisect(|l| free_potential_over_rt(nv, chi, l), 1.0 + 1e-9, 100.0)
}

/// Thickness stretch `λ_t` (from dry) of a layer held at the in-plane stretch `λ0` (from dry) in
/// a bath at μ = 0: `P_yy = 0`, i.e. `Nv (λ_t − 1/λ_t) + λ0² [ln(1 − 1/J) + 1/J + χ/J²] = 0`,
/// `J = λ0² λ_t`. At `λ0 = 1` this is the laterally constrained layer of Hong, Liu & Suo (Int.
/// J. Solids Struct. 46 (2009) 3282; page from memory):
/// `Nv(λ − 1/λ) + ln(1 − 1/λ) + 1/λ + χ/λ² = 0`.
pub fn bonded_stretch(nv: f64, chi: f64, l0: f64) -> f64 {
    bisect(
        |lt: f64| {
            let j = l0 * l0 * lt;
            nv * (lt - 1.0 / lt) + l0 * l0 * ((1.0 - 1.0 / j).ln() + 1.0 / j + chi / (j * j))
        },
        1.0 / (l0 * l0) + 1e-9,
        100.0,
    )
}

/// In-plane true stress of that layer: `σ = G(λ0² − 1)/(λ0² λ_t) − G(λ_t − 1/λ_t)/λ0²`, at
/// `λ0 = 1` the published `−N k T (λ − 1/λ)` (Hong, Liu & Suo 2009).
pub fn bonded_stress(g: f64, l0: f64, lt: f64) -> f64 {
    g * (l0 * l0 - 1.0) / (l0 * l0 * lt) - g * (lt - 1.0 / lt) / (l0 * l0)
}
