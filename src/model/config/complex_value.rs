//! One zero or pole as written: a real number `0.3`, a pair `[re, im]`, or polar
//! `{ radius = 0.9, angle_deg = 30 }` / `{ radius = 0.9, angle_rad = 0.52 }`.

use num_complex::Complex64;

use super::schema::{ANGLE_DEG, ANGLE_RAD, POLAR_TABLE, RADIUS};
use super::tree::Node;
use crate::model::error::{ConfigError, ConfigErrorKind};

const FORMS: &str = "write a zero or pole as a real number (0.3), as [re, im] ([0.5, 0.2]), or as \
                     { radius = 0.9, angle_deg = 30 }";

pub(crate) fn read_complex(node: &Node<'_>) -> Result<Complex64, ConfigError> {
    if node.is_table() {
        return read_polar(node);
    }
    if node.is_array() {
        let items = node.array()?;
        if items.len() != 2 {
            return Err(node.fail(
                ConfigErrorKind::MalformedComplex,
                format!(
                    "a complex value written as a list needs exactly two numbers [re, im]; this \
                     one has {}",
                    items.len()
                ),
                FORMS,
            ));
        }
        return Ok(Complex64::new(items[0].number()?, items[1].number()?));
    }
    match node.number() {
        Ok(re) => Ok(Complex64::new(re, 0.0)),
        Err(e) if e.kind == ConfigErrorKind::WrongType => Err(node.fail(
            ConfigErrorKind::MalformedComplex,
            "this is not a zero or pole",
            FORMS,
        )),
        Err(e) => Err(e),
    }
}

fn read_polar(node: &Node<'_>) -> Result<Complex64, ConfigError> {
    let table = node.table(&POLAR_TABLE)?;
    let radius_node = table.require(
        RADIUS,
        "add radius = the distance from the origin, e.g. 0.9",
    )?;
    let radius = radius_node.number()?;
    if radius < 0.0 {
        return Err(radius_node.fail(
            ConfigErrorKind::MalformedComplex,
            format!("the radius {radius} is negative"),
            "a radius is a distance: make it positive and turn the angle by 180 degrees",
        ));
    }
    let angle = match (table.get(ANGLE_DEG), table.get(ANGLE_RAD)) {
        (Some(deg), None) => deg.number()?.to_radians(),
        (None, Some(rad)) => rad.number()?,
        (Some(_), Some(rad)) => {
            return Err(rad.fail(
                ConfigErrorKind::ConflictingKeys,
                "both angle_deg and angle_rad are given",
                "keep one of them",
            ))
        }
        (None, None) => {
            return Err(table.missing(
                ANGLE_DEG,
                ConfigErrorKind::MissingKey,
                "a polar zero or pole needs an angle",
                "add angle_deg = … (degrees) or angle_rad = … (radians)",
            ))
        }
    };
    Ok(snap_to_axes(Complex64::from_polar(radius, angle)))
}

/// `cos`/`sin` of 90° or 180° leave a residue of about 1e-16 where the user meant an exact zero;
/// that residue would make `{ radius = 0.5, angle_deg = 180 }` a complex value needing a
/// conjugate. Components this small relative to the radius are set to zero.
fn snap_to_axes(z: Complex64) -> Complex64 {
    let floor = 4.0 * f64::EPSILON * z.norm();
    let snap = |x: f64| if x.abs() <= floor { 0.0 } else { x };
    Complex64::new(snap(z.re), snap(z.im))
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: common practice — cos 180° = −1, sin 180° = 0 exactly; cos 90° = 0.
    #[test]
    fn axes_are_exact_after_snapping() {
        let z = snap_to_axes(Complex64::from_polar(0.5, std::f64::consts::PI));
        assert_eq!(z, Complex64::new(-0.5, 0.0));
        let z = snap_to_axes(Complex64::from_polar(0.5, std::f64::consts::FRAC_PI_2));
        assert_eq!(z, Complex64::new(0.0, 0.5));
        let z = snap_to_axes(Complex64::from_polar(0.9, 0.3));
        assert_eq!(z, Complex64::from_polar(0.9, 0.3));
    }
}
