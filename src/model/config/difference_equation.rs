//! `difference_equation = { b = [...], a = [...] }`: the channel given by its coefficients,
//! y[n] = (Σ b[k]·x[n−k] − Σ_{k≥1} a[k]·y[n−k]) / a[0].

use super::schema::{A, B, DIFFERENCE_EQUATION_TABLE};
use super::tree::Node;
use crate::model::error::{ConfigError, ConfigErrorKind};
use crate::model::{TransferFunction, MAX_ORDER};

pub(crate) fn read_difference_equation(node: &Node<'_>) -> Result<TransferFunction, ConfigError> {
    let table = node.table(&DIFFERENCE_EQUATION_TABLE)?;
    let b_node = table.require(
        B,
        "give the numerator, e.g. b = [1.0, 0.5] for y[n] = x[n] + 0.5·x[n-1]",
    )?;
    let b = coefficient_list(&b_node, "b")?;
    if b.iter().all(|&c| c == 0.0) {
        return Err(b_node.fail(
            ConfigErrorKind::AllZero,
            "every coefficient of b is zero, so the channel passes no signal at all",
            "give at least one non-zero coefficient in b",
        ));
    }
    let a = match table.get(A) {
        None => vec![1.0],
        Some(a_node) => {
            let a = coefficient_list(&a_node, "a")?;
            if a[0] == 0.0 {
                return Err(a_node.fail(
                    ConfigErrorKind::LeadingZero,
                    "a[0] is zero, so the difference equation has no term for the current output",
                    "scale the denominator so a[0] is non-zero (normally 1)",
                ));
            }
            a
        }
    };
    Ok(TransferFunction::new(b, a))
}

/// A non-empty list of finite numbers, no longer than a polynomial of order [`MAX_ORDER`].
fn coefficient_list(node: &Node<'_>, name: &str) -> Result<Vec<f64>, ConfigError> {
    let values = node.numbers()?;
    if values.is_empty() {
        let help = if name == "a" {
            "leave `a` out for a channel without feedback (a = [1.0]), or list its coefficients"
        } else {
            "list the coefficients, starting with b[0] (the weight of the current input)"
        };
        return Err(node.fail(
            ConfigErrorKind::EmptyList,
            format!("`{name}` has no coefficients"),
            help,
        ));
    }
    if values.len() > MAX_ORDER + 1 {
        return Err(node.fail(
            ConfigErrorKind::TooLong,
            format!(
                "`{name}` has {} coefficients; at most {} (order {MAX_ORDER}) are supported",
                values.len(),
                MAX_ORDER + 1
            ),
            "describe a long echo pattern with [path.echoes], or shorten the model",
        ));
    }
    Ok(values)
}
