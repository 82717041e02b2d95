//! A transfer function written out as the difference equation that runs it.

use super::numbers::significant;

/// Coefficients smaller than this share of the largest one are rounding left over from the
/// design's arithmetic (a few units in the last place of f64), not terms of the filter: the
/// equation leaves them out. The JSON keeps every coefficient as designed.
const ROUNDING_NOISE: f64 = 64.0 * f64::EPSILON;

/// `y[n] = b0 x[n] + b1 x[n-1] + … - a1 y[n-1] - …` for H(z) = B(z)/A(z), normalised so a₀ = 1.
/// Zero coefficients (and rounding noise, see [`ROUNDING_NOISE`]) are left out; a coefficient
/// of exactly 1 is not written. The minus is ASCII, as everywhere in redress's output.
pub fn difference_equation(b: &[f64], a: &[f64]) -> String {
    let a0 = a.first().copied().unwrap_or(1.0);
    let a0 = if a0 == 0.0 { 1.0 } else { a0 };
    let mut terms: Vec<(f64, String)> = Vec::new();
    for (k, &bk) in b.iter().enumerate() {
        terms.push((bk / a0, signal("x", k)));
    }
    for (k, &ak) in a.iter().enumerate().skip(1) {
        terms.push((-ak / a0, signal("y", k)));
    }
    let largest = terms.iter().fold(0.0f64, |m, (c, _)| m.max(c.abs()));
    let mut text = String::from("y[n] =");
    let mut first = true;
    for (coefficient, name) in terms
        .into_iter()
        .filter(|(c, _)| *c != 0.0 && c.abs() > ROUNDING_NOISE * largest)
    {
        let magnitude = coefficient.abs();
        let sign = if coefficient < 0.0 { "-" } else { "+" };
        if first {
            text.push(' ');
            if coefficient < 0.0 {
                text.push('-');
            }
        } else {
            text.push_str(&format!(" {sign} "));
        }
        if magnitude != 1.0 {
            text.push_str(&significant(magnitude));
            text.push(' ');
        }
        text.push_str(&name);
        first = false;
    }
    if first {
        text.push_str(" 0");
    }
    text
}

fn signal(name: &str, lag: usize) -> String {
    if lag == 0 {
        format!("{name}[n]")
    } else {
        format!("{name}[n-{lag}]")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fir_and_recursive_terms_with_signs() {
        // y[n] = Σ b_k x[n−k] − Σ a_k y[n−k], a₀ = 1 (the standard difference equation of
        // H = B/A; common practice).
        assert_eq!(
            difference_equation(&[1.0, 0.0, 0.5], &[1.0, -0.3, 0.02]),
            "y[n] = x[n] + 0.5 x[n-2] + 0.3 y[n-1] - 0.02 y[n-2]"
        );
    }

    #[test]
    fn normalises_by_a0_and_leads_with_a_minus() {
        assert_eq!(
            difference_equation(&[-2.0, 1.0], &[2.0, 1.0]),
            "y[n] = -x[n] + 0.5 x[n-1] - 0.5 y[n-1]"
        );
    }

    #[test]
    fn rounding_noise_is_not_a_term() {
        // A denominator left with 1.16e-16 where the design meant 0: the term is noise.
        assert_eq!(
            difference_equation(&[2.0, 0.5], &[1.0, -1.1618e-16, 0.25]),
            "y[n] = 2 x[n] + 0.5 x[n-1] - 0.25 y[n-2]"
        );
        // A small but real coefficient stays.
        assert_eq!(
            difference_equation(&[1.0], &[1.0, 3.5e-10]),
            "y[n] = x[n] - 3.5e-10 y[n-1]"
        );
    }

    #[test]
    fn all_zero_numerator_says_zero() {
        assert_eq!(difference_equation(&[0.0], &[1.0]), "y[n] = 0");
    }
}
