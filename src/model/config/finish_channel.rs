//! The last step for every model form: tidy the transfer function and check the invariants that
//! [`TransferFunction`] promises downstream, whatever form it was written in.

use super::tree::Node;
use crate::model::error::{ConfigError, ConfigErrorKind};
use crate::model::{TransferFunction, MAX_ORDER};
use crate::numeric::poly::{leading_zeros, trim_trailing_zeros};

/// Drops trailing zero coefficients (padding in z⁻¹, which would otherwise show up as extra
/// zeros and poles at the origin) and checks: every coefficient finite, `b` not all zero,
/// `a[0] != 0`, neither longer than `MAX_ORDER + 1`. The form readers already refuse each of
/// these with a more specific message; this is the guarantee, not the explanation.
pub(crate) fn finish_channel(
    channel: TransferFunction,
    model: &Node<'_>,
) -> Result<TransferFunction, ConfigError> {
    let fail = |kind, problem: &str| {
        model.fail(
            kind,
            format!("the channel this describes is not usable: {problem}"),
            "check the values of this model",
        )
    };
    if channel.b.iter().chain(&channel.a).any(|c| !c.is_finite()) {
        return Err(fail(
            ConfigErrorKind::NotFinite,
            "a coefficient is not finite",
        ));
    }
    let b = trim_trailing_zeros(&channel.b).to_vec();
    let a = trim_trailing_zeros(&channel.a).to_vec();
    if b.is_empty() {
        return Err(fail(ConfigErrorKind::AllZero, "the numerator is zero"));
    }
    if a.first().is_none_or(|&a0| a0 == 0.0) {
        return Err(fail(ConfigErrorKind::LeadingZero, "a[0] is zero"));
    }
    if b.len() > MAX_ORDER + 1 || a.len() > MAX_ORDER + 1 {
        return Err(fail(
            ConfigErrorKind::TooLong,
            &format!("its order exceeds {MAX_ORDER}"),
        ));
    }
    Ok(TransferFunction::new(b, a))
}

/// Order of the exact inverse this channel would get: the bulk delay (leading zero taps of b)
/// is stripped before inverting, so it does not count.
pub(crate) fn inverse_order(channel: &TransferFunction) -> usize {
    let numerator = channel.b.len() - leading_zeros(&channel.b);
    numerator.max(channel.a.len()).saturating_sub(1)
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: common practice — a bulk delay z⁻ᴰ in front of a first-order numerator leaves a
    // first-order inverse.
    #[test]
    fn inverse_order_ignores_bulk_delay() {
        let tf = TransferFunction::new(vec![0.0, 0.0, 0.0, 1.0, 0.5], vec![1.0]);
        assert_eq!(inverse_order(&tf), 1);
        let tf = TransferFunction::new(vec![1.0], vec![1.0, -0.5, 0.25]);
        assert_eq!(inverse_order(&tf), 2);
    }
}
