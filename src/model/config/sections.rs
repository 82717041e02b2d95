//! `sections = [[b0, b1, b2, a0, a1, a2], …]`: the channel as a cascade of second-order
//! sections, H(z) = Π (b0 + b1·z⁻¹ + b2·z⁻²) / (a0 + a1·z⁻¹ + a2·z⁻²).

use super::tree::Node;
use crate::model::error::{ConfigError, ConfigErrorKind};
use crate::model::{TransferFunction, MAX_ORDER};
use crate::numeric::poly::multiply;

/// Each section has order 2, so this many keeps the product within [`MAX_ORDER`].
const MAX_SECTIONS: usize = MAX_ORDER / 2;

pub(crate) fn read_sections(node: &Node<'_>) -> Result<TransferFunction, ConfigError> {
    let items = node.array()?;
    if items.is_empty() {
        return Err(node.fail(
            ConfigErrorKind::EmptyList,
            "`sections` lists no sections",
            "give at least one section [b0, b1, b2, a0, a1, a2]",
        ));
    }
    if items.len() > MAX_SECTIONS {
        return Err(node.fail(
            ConfigErrorKind::TooLong,
            format!(
                "{} sections make order {}; at most {MAX_SECTIONS} sections (order {MAX_ORDER}) \
                 are supported",
                items.len(),
                2 * items.len()
            ),
            "simplify the model",
        ));
    }
    let mut b = vec![1.0];
    let mut a = vec![1.0];
    for item in &items {
        let (sb, sa) = read_section(item)?;
        b = multiply(&b, &sb);
        a = multiply(&a, &sa);
    }
    if b.iter().chain(&a).any(|c| !c.is_finite()) {
        return Err(node.fail(
            ConfigErrorKind::NotFinite,
            "multiplied out, these sections give coefficients too large for 64-bit floating point",
            "scale the sections' numerators down",
        ));
    }
    Ok(TransferFunction::new(b, a))
}

/// One section's ([b0, b1, b2], [a0, a1, a2]).
fn read_section(item: &Node<'_>) -> Result<(Vec<f64>, Vec<f64>), ConfigError> {
    let help = "write each section as six numbers [b0, b1, b2, a0, a1, a2]; for a first-order \
                section set b2 and a2 to 0";
    if !item.is_array() {
        return Err(item.fail(
            ConfigErrorKind::WrongType,
            "a section must be a list of six numbers",
            help,
        ));
    }
    let values = item.numbers()?;
    if values.len() != 6 {
        return Err(item.fail(
            ConfigErrorKind::WrongLength,
            format!("this section has {} numbers, not 6", values.len()),
            help,
        ));
    }
    if values[3] == 0.0 {
        return Err(item.fail(
            ConfigErrorKind::LeadingZero,
            "a0 (the fourth number) is zero, so the section has no term for its current output",
            "scale the section's denominator so a0 is non-zero (normally 1)",
        ));
    }
    if values[..3].iter().all(|&c| c == 0.0) {
        return Err(item.fail(
            ConfigErrorKind::AllZero,
            "b0, b1 and b2 are all zero, so this section (and the whole cascade) passes no signal",
            "give the section a non-zero numerator",
        ));
    }
    Ok((values[..3].to_vec(), values[3..].to_vec()))
}
