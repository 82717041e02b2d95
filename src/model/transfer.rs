use serde::Serialize;

/// H(z) = B(z)/A(z), both polynomials in z⁻¹ with real coefficients, `b[0] + b[1]·z⁻¹ + …`.
///
/// Invariants once built by the config stage: `a[0] != 0`, every coefficient finite, `b` not all
/// zero, neither longer than [`super::MAX_ORDER`] + 1.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TransferFunction {
    pub b: Vec<f64>,
    pub a: Vec<f64>,
}

impl TransferFunction {
    pub fn new(b: Vec<f64>, a: Vec<f64>) -> Self {
        Self { b, a }
    }

    /// Both polynomials scaled so that a[0] = 1 (the form a difference equation is run in).
    pub fn normalised(&self) -> Self {
        let a0 = self.a[0];
        Self {
            b: self.b.iter().map(|x| x / a0).collect(),
            a: self.a.iter().map(|x| x / a0).collect(),
        }
    }

    /// The larger of the two orders.
    pub fn order(&self) -> usize {
        self.b.len().max(self.a.len()).saturating_sub(1)
    }
}
