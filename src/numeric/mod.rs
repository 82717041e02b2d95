//! Arithmetic shared by every stage: polynomials in z⁻¹, their roots, the step-down
//! (Schur–Cohn) recursion, frequency responses and fractional-octave bands. Nothing here knows
//! about audio or config.

pub mod fractional_octave;
pub mod homomorphic;
pub mod impulse;
pub mod poly;
pub mod response;
pub mod roots;
pub mod stepdown;
pub mod toeplitz;
pub mod winding;

pub use num_complex::Complex64;
