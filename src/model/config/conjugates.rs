//! Complex zeros and poles of a real channel come in conjugate pairs; this pairs them up, and
//! either refuses a value without its partner or adds the partner, as the user chose.

use num_complex::Complex64;

use super::tree::Node;
use crate::model::error::{ConfigError, ConfigErrorKind};

/// What to do with a complex zero or pole whose conjugate is not listed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum ConjugatePolicy {
    /// Refuse it: a missing conjugate is more often a typo than an intention.
    Require,
    /// Add the missing conjugate.
    Add,
}

/// Two values are taken as conjugates when they differ by less than this, relative to their
/// size: enough for the same decimals written twice (or ±angle in polar form), far too tight
/// for two different guesses.
const PAIRING_TOLERANCE: f64 = 1e-9;

/// A near-miss within this relative distance is mentioned in the error as the likely partner.
const NEAR_MISS: f64 = 1e-2;

/// Formats a complex value for messages: `0.5+0.2j`.
pub(crate) fn show(z: Complex64) -> String {
    if z.im == 0.0 {
        format!("{}", z.re)
    } else if z.im < 0.0 {
        format!("{}-{}j", z.re, -z.im)
    } else {
        format!("{}+{}j", z.re, z.im)
    }
}

/// Pairs every complex value with its conjugate. Paired partners are made exact conjugates of
/// each other (so the expanded polynomial is exactly real); unpaired ones are refused or get a
/// partner added, per `policy`. `what` names the values in messages ("zero", "pole").
pub(crate) fn pair_conjugates(
    values: &[(Complex64, Node<'_>)],
    policy: ConjugatePolicy,
    list: &Node<'_>,
    what: &str,
) -> Result<Vec<Complex64>, ConfigError> {
    let mut out: Vec<Complex64> = values.iter().map(|(z, _)| *z).collect();
    let mut paired = vec![false; out.len()];
    let mut added = Vec::new();
    for i in 0..out.len() {
        if out[i].im == 0.0 || paired[i] {
            continue;
        }
        let target = out[i].conj();
        let scale = out[i].norm().max(1.0);
        let partner = (i + 1..out.len())
            .filter(|&j| !paired[j] && out[j].im != 0.0)
            .find(|&j| (out[j] - target).norm() <= PAIRING_TOLERANCE * scale);
        match partner {
            Some(j) => {
                out[j] = target;
                paired[i] = true;
                paired[j] = true;
            }
            None if policy == ConjugatePolicy::Add => added.push(target),
            None => {
                let near = (0..out.len())
                    .filter(|&j| j != i && !paired[j] && out[j].im != 0.0)
                    .map(|j| (j, (out[j] - target).norm()))
                    .filter(|&(_, d)| d <= NEAR_MISS * scale)
                    .min_by(|x, y| x.1.total_cmp(&y.1));
                let node = &values[i].1;
                let problem = format!(
                    "the complex {what} {} is listed without its conjugate {}, so the channel's \
                     coefficients would not be real",
                    show(out[i]),
                    show(target)
                );
                let help = match near {
                    Some((j, d)) => format!(
                        "{} (`{}`) looks meant as its conjugate but differs by {d:.1e}: write \
                         both with the same digits",
                        show(out[j]),
                        values[j].1.key
                    ),
                    None => format!(
                        "add [{}, {}] to `{}`, or set conjugates = \"add\" to have missing \
                         conjugates added",
                        target.re, target.im, list.key
                    ),
                };
                return Err(node.fail(ConfigErrorKind::MissingConjugate, problem, help));
            }
        }
    }
    out.extend(added);
    Ok(out)
}
