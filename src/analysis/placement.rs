use serde::Serialize;

use crate::numeric::roots::Root;

/// Where a root lies relative to the unit circle.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Placement {
    Inside,
    /// Within the circle tolerance of |z| = 1.
    OnCircle,
    Outside,
}

/// A root with its placement and its margin to the circle.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct PlacedRoot {
    pub root: Root,
    pub placement: Placement,
    /// 1 − |z|: positive inside, negative outside.
    pub margin: f64,
}

/// Places `root` against the unit circle; | |z| − 1 | ≤ `tolerance` counts as on it.
pub fn place(root: Root, tolerance: f64) -> PlacedRoot {
    let margin = 1.0 - root.radius();
    let placement = if margin.abs() <= tolerance {
        Placement::OnCircle
    } else if margin > 0.0 {
        Placement::Inside
    } else {
        Placement::Outside
    };
    PlacedRoot {
        root,
        placement,
        margin,
    }
}
