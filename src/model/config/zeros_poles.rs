//! `[path.roots]`: the channel given by its zeros, poles and gain,
//! H(z) = gain·Π(1 − zₖz⁻¹) / Π(1 − pₖz⁻¹).

use num_complex::Complex64;

use super::complex_value::read_complex;
use super::conjugates::{pair_conjugates, ConjugatePolicy};
use super::schema::{CONJUGATES, GAIN, POLES, ROOTS_TABLE, ZEROS};
use super::tree::Node;
use crate::model::error::{ConfigError, ConfigErrorKind};
use crate::model::{TransferFunction, MAX_ORDER};
use crate::numeric::poly::from_roots;

pub(crate) fn read_zeros_poles(node: &Node<'_>) -> Result<TransferFunction, ConfigError> {
    let table = node.table(&ROOTS_TABLE)?;
    let policy = match table.get(CONJUGATES) {
        None => ConjugatePolicy::Require,
        Some(n) => n.choice(&[
            ("require", ConjugatePolicy::Require),
            ("add", ConjugatePolicy::Add),
        ])?,
    };
    let gain = match table.get(GAIN) {
        None => 1.0,
        Some(n) => {
            let gain = n.number()?;
            if gain == 0.0 {
                return Err(n.fail(
                    ConfigErrorKind::AllZero,
                    "a gain of 0 makes the channel pass no signal at all",
                    "give the channel's gain (1 when the zeros and poles say it all)",
                ));
            }
            gain
        }
    };
    let zeros_node = table.require(
        ZEROS,
        "list the channel's zeros, e.g. zeros = [0.3, [0.5, 0.2], [0.5, -0.2]] (zeros = [] for none)",
    )?;
    let zeros = read_roots(&zeros_node, policy, "zero")?;
    let b = expand(gain, &zeros, &zeros_node)?;
    let a = match table.get(POLES) {
        None => vec![1.0],
        Some(poles_node) => {
            let poles = read_roots(&poles_node, policy, "pole")?;
            expand(1.0, &poles, &poles_node)?
        }
    };
    Ok(TransferFunction::new(b, a))
}

/// The values of a zeros or poles list, with conjugates paired (or added).
fn read_roots(
    list: &Node<'_>,
    policy: ConjugatePolicy,
    what: &str,
) -> Result<Vec<Complex64>, ConfigError> {
    let items = list.array()?;
    let too_many = |count: usize, after_adding: bool| {
        list.fail(
            ConfigErrorKind::TooLong,
            format!(
                "{count} {what}s{}; at most {MAX_ORDER} are supported",
                if after_adding {
                    " once the missing conjugates are added"
                } else {
                    ""
                }
            ),
            "describe a long echo pattern with [path.echoes], or simplify the model",
        )
    };
    if items.len() > MAX_ORDER {
        return Err(too_many(items.len(), false));
    }
    let values = items
        .into_iter()
        .map(|n| Ok((read_complex(&n)?, n)))
        .collect::<Result<Vec<_>, ConfigError>>()?;
    let roots = pair_conjugates(&values, policy, list, what)?;
    if roots.len() > MAX_ORDER {
        return Err(too_many(roots.len(), true));
    }
    Ok(roots)
}

/// gain·Π(1 − rₖz⁻¹) as real coefficients.
fn expand(gain: f64, roots: &[Complex64], list: &Node<'_>) -> Result<Vec<f64>, ConfigError> {
    let coefficients = from_roots(gain, roots).ok_or_else(|| {
        // Conjugates were paired exactly above, so this only happens when the products are so
        // large that rounding leaves an imaginary residue.
        list.fail(
            ConfigErrorKind::NotFinite,
            "these values do not expand to a polynomial with real coefficients in 64-bit \
             floating point",
            "check for very large radii",
        )
    })?;
    if coefficients.iter().any(|c| !c.is_finite()) {
        return Err(list.fail(
            ConfigErrorKind::NotFinite,
            "multiplied out, these values give coefficients too large for 64-bit floating point",
            "check for very large radii",
        ));
    }
    Ok(coefficients)
}
