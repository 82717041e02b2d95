//! Checks a transfer function handed to `realize` and puts it in the form every structure starts
//! from: a[0] = 1, trailing zero coefficients dropped (they are no part of the polynomial).

use crate::model::TransferFunction;
use crate::numeric::poly::{padded_pair, trim_trailing_zeros};

use super::RealizeError;

/// B(z)/A(z) with a[0] = 1 and neither polynomial carrying trailing zeros.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Normalised {
    pub b: Vec<f64>,
    pub a: Vec<f64>,
}

impl Normalised {
    /// Both polynomials padded with trailing zeros to `order() + 1` coefficients.
    pub fn padded(&self) -> (Vec<f64>, Vec<f64>) {
        padded_pair(&self.b, &self.a)
    }
}

pub(crate) fn normalise(tf: &TransferFunction) -> Result<Normalised, RealizeError> {
    let invalid = |problem: String| Err(RealizeError::InvalidInput { problem });
    if tf.a.is_empty() {
        return invalid("the denominator a has no coefficients".into());
    }
    if tf.b.is_empty() {
        return invalid("the numerator b has no coefficients".into());
    }
    for (name, coefficients) in [("b", &tf.b), ("a", &tf.a)] {
        if let Some(i) = coefficients.iter().position(|c| !c.is_finite()) {
            return invalid(format!("{name}[{i}] = {} is not finite", coefficients[i]));
        }
    }
    let a0 = tf.a[0];
    if a0 == 0.0 {
        return invalid("a[0] is zero, so the difference equation has no output term".into());
    }
    let b: Vec<f64> = tf.b.iter().map(|x| x / a0).collect();
    let a: Vec<f64> = tf.a.iter().map(|x| x / a0).collect();
    if let Some(i) = b.iter().chain(a.iter()).position(|c| !c.is_finite()) {
        return invalid(format!(
            "dividing by a[0] = {a0} overflows (coefficient {i} of b then a becomes infinite)"
        ));
    }
    let b = trim_trailing_zeros(&b).to_vec();
    let a = trim_trailing_zeros(&a).to_vec();
    if b.is_empty() {
        return invalid(
            "the numerator b is zero everywhere, so the filter would only output silence".into(),
        );
    }
    Ok(Normalised { b, a })
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source for these checks: common practice (a difference equation is run with a[0] = 1).
    #[test]
    fn divides_by_a0_and_drops_trailing_zeros() {
        let n = normalise(&TransferFunction::new(
            vec![2.0, 1.0, 0.0],
            vec![4.0, 2.0, 0.0, 0.0],
        ))
        .unwrap();
        assert_eq!(n.b, vec![0.5, 0.25]);
        assert_eq!(n.a, vec![1.0, 0.5]);
    }

    #[test]
    fn refuses_what_cannot_run() {
        let cases = [
            (vec![1.0], vec![0.0, 1.0], "a[0] is zero"),
            (vec![1.0, f64::NAN], vec![1.0], "b[1] = NaN"),
            (vec![0.0, 0.0], vec![1.0], "zero everywhere"),
            (vec![], vec![1.0], "no coefficients"),
            (vec![1e10], vec![1e-300, 1.0], "overflows"),
        ];
        for (b, a, expected) in cases {
            match normalise(&TransferFunction::new(b, a)) {
                Err(RealizeError::InvalidInput { problem }) => {
                    assert!(problem.contains(expected), "{problem}")
                }
                other => panic!("expected InvalidInput containing {expected:?}, got {other:?}"),
            }
        }
    }
}
