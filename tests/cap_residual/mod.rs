//! What the boost cap leaves in channel ∘ inverse, in closed form from the zeros it moved.

use num_complex::Complex64;

use redress::design::InverseDesign;

/// Σ 20·log10(|1 − from·e^{−jω}| / |1 − to·e^{−jω}|) over the moved zeros, less the level
/// reduction (dB): moving a zero from `from` to `to` multiplies the cascade by exactly that
/// factor's ratio (common practice), and nothing else in a minimum-phase substitute changes
/// |channel ∘ inverse|.
pub fn left_by_cap(design: &InverseDesign, omega: f64) -> f64 {
    let Some(cap) = &design.boost_cap else {
        return 0.0;
    };
    let e = Complex64::from_polar(1.0, -omega);
    let one = Complex64::new(1.0, 0.0);
    cap.moved_zeros
        .iter()
        .map(|m| 20.0 * ((one - m.from * e).norm() / (one - m.to * e).norm()).log10())
        .sum::<f64>()
        - cap.level_reduction_db
}
