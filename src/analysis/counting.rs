//! How many zeros lie inside, on and outside the unit circle: from the listed roots where they
//! were computed, else counted without them.
//!
//! Unlisted, the count is the argument principle's ([`count_inside`]) at the radii 1 − tolerance
//! (strictly inside) and 1 + tolerance (inside or on); what lies between is on the circle. A
//! zero within round-off of one of those radii makes its count undecided; the radius is then
//! moved away from the circle step by step (doubling the distance), and the band it crosses
//! counts as on the circle, the cautious reading. The step-down recursion counts the zeros
//! inside too ([`count_inside_by_step_down`]); where its error growth Π 1/|1 − k²| keeps its
//! rounding under [`STEP_DOWN_TRUSTED_ERROR`], it must agree, and where it does not, the
//! disagreement is recorded and the fewer zeros inside are believed. Where roots are listed,
//! the argument principle cross-checks them the same way.

use serde::Serialize;

use super::{PlacedRoot, Placement};
use crate::numeric::stepdown::{count_inside_by_step_down, StepDownCount};
use crate::numeric::winding::{count_inside, WindingCount};

/// Largest order whose roots are computed and listed (companion-matrix eigenvalues, O(n³)).
pub const LISTED_ROOTS_MAX_ORDER: usize = crate::numeric::roots::AFFORDABLE_ORDER;

/// Listed roots are cross-checked by the argument principle above this order.
pub const CROSS_CHECK_FROM_ORDER: usize = 64;

/// The step-down count is trusted while growth · order · ε stays under this.
pub const STEP_DOWN_TRUSTED_ERROR: f64 = 1e-6;

/// Steps a radius is moved away from the circle (doubling its distance) before giving up.
const WIDENING_STEPS: u32 = 24;

/// Zeros of one polynomial against the unit circle.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ZeroCount {
    pub inside: usize,
    pub on_circle: usize,
    pub outside: usize,
    /// True when the roots were computed and are listed.
    pub listed: bool,
    /// The argument principle's count just inside the circle (None when undecided or not run).
    pub winding_inside: Option<WindingCount>,
    /// Its count just outside.
    pub winding_within: Option<WindingCount>,
    /// The step-down count, when the recursion could be carried through.
    pub step_down: Option<StepDownCount>,
    /// True when the step-down count's error growth allowed it to be used as a check.
    pub step_down_trusted: bool,
}

impl ZeroCount {
    pub fn all_inside(&self) -> bool {
        self.on_circle == 0 && self.outside == 0
    }

    /// Zeros in all.
    pub fn degree(&self) -> usize {
        self.inside + self.on_circle + self.outside
    }
}

/// Counts the zeros of `c` (c[0] ≠ 0); `roots` are its placed roots when they were listed
/// (order ≤ [`LISTED_ROOTS_MAX_ORDER`]), empty otherwise. Disagreements go to `notes`.
pub fn count_zeros(
    what: &str,
    c: &[f64],
    roots: &[PlacedRoot],
    tolerance: f64,
    notes: &mut Vec<String>,
) -> ZeroCount {
    let degree = c.len() - 1;
    let listed = degree <= LISTED_ROOTS_MAX_ORDER;
    let step_down = count_inside_by_step_down(c);
    let step_down_trusted = step_down
        .is_some_and(|s| s.growth * degree as f64 * f64::EPSILON <= STEP_DOWN_TRUSTED_ERROR);
    let widened = |toward: f64| widened_count(c, tolerance, toward);
    if degree == 0 {
        return ZeroCount {
            inside: 0,
            on_circle: 0,
            outside: 0,
            listed,
            winding_inside: None,
            winding_within: None,
            step_down,
            step_down_trusted,
        };
    }
    if listed {
        // The argument principle cross-checks the roots where they start to lose accuracy;
        // below that order the roots and the step-down test decide, as they always have.
        let cross_check = degree > CROSS_CHECK_FROM_ORDER;
        let winding_at = |r: f64| {
            if cross_check {
                count_inside(c, r).ok()
            } else {
                None
            }
        };
        let sum = |p: Placement| {
            roots
                .iter()
                .filter(|r| r.placement == p)
                .map(|r| r.root.multiplicity)
                .sum::<usize>()
        };
        let count = ZeroCount {
            inside: sum(Placement::Inside),
            on_circle: sum(Placement::OnCircle),
            outside: sum(Placement::Outside),
            listed,
            winding_inside: winding_at(1.0 - tolerance),
            winding_within: winding_at(1.0 + tolerance),
            step_down,
            step_down_trusted,
        };
        if let Some(w) = count.winding_inside {
            if w.inside != count.inside {
                notes.push(format!(
                    "{what}: the roots put {} inside the circle, the argument principle {} \
                     (grid of {} points); the roots' reading stands",
                    count.inside, w.inside, w.grid_points
                ));
            }
        }
        return count;
    }
    let inner = widened(-1.0);
    let outer = widened(1.0);
    let mut inside = inner.map_or(0, |w| w.inside);
    let within = outer.map_or(degree, |w| w.inside).max(inside);
    if inner.is_none() || outer.is_none() {
        notes.push(format!(
            "{what}: the argument principle could not separate the zeros from the circle \
             (a zero within round-off of it); the undecided ones count as on the circle"
        ));
    }
    if let (Some(s), true) = (step_down, step_down_trusted) {
        if s.inside < inside || s.inside > within {
            notes.push(format!(
                "{what}: the step-down count puts {} inside the circle, the argument principle \
                 {inside} to {within}; the fewer inside is believed",
                s.inside
            ));
            inside = inside.min(s.inside);
        }
    }
    ZeroCount {
        inside,
        on_circle: within - inside,
        outside: degree - within,
        listed,
        winding_inside: inner,
        winding_within: outer,
        step_down,
        step_down_trusted,
    }
}

/// The count at 1 ± tolerance (sign of `toward`), moved away from the circle while a zero sits
/// within round-off of the radius tried.
fn widened_count(c: &[f64], tolerance: f64, toward: f64) -> Option<WindingCount> {
    let mut distance = tolerance.max(f64::EPSILON);
    for _ in 0..WIDENING_STEPS {
        if let Ok(w) = count_inside(c, 1.0 + toward * distance) {
            return Some(w);
        }
        distance *= 2.0;
    }
    None
}
