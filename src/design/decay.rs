/// Samples for an inverse's impulse response envelope to fall by 60 dB.
///
/// With largest pole radius r the envelope falls as rⁿ, so 60 dB (a factor 1000) takes
/// n = 3 / (−log10 r) samples (common practice; repeated poles decay somewhat slower, as nᵐ⁻¹·rⁿ).
/// With all poles at the origin the inverse is FIR: it has died after its `length` taps.
pub fn decay_60db_samples(largest_pole_radius: f64, length: usize) -> f64 {
    if largest_pole_radius <= 0.0 {
        return length.saturating_sub(1) as f64;
    }
    if largest_pole_radius >= 1.0 {
        return f64::INFINITY;
    }
    3.0 / (-largest_pole_radius.log10())
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: common practice — 0.999ⁿ = 10⁻³ at n = ln(1000)/−ln(0.999) ≈ 6904.3.
    #[test]
    fn one_pole_decay() {
        let n = decay_60db_samples(0.999, 2);
        assert!((n - 1000.0_f64.ln() / -(0.999_f64).ln()).abs() < 1e-9);
        assert!((0.999_f64.powf(n) - 1e-3).abs() < 1e-15);
    }
}
