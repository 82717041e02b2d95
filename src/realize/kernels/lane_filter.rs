//! One group of channels run side by side in vector lanes, whichever structure they share.

use super::super::Filter;
use super::dispatch::Arithmetic;
use super::lane_direct_form::LaneDirectForm;
use super::lane_lattice::LaneLattice;
use super::lane_sections::LaneSections;

#[derive(Debug, Clone)]
pub enum LaneFilter<const L: usize> {
    DirectForm2T(LaneDirectForm<L>),
    Sections(LaneSections<L>),
    LatticeLadder(LaneLattice<L>),
}

/// Which filters may share a lane group: the same structure and the same size (order, or
/// number of sections), so every lane runs the same loop.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum LaneShape {
    DirectForm2T(usize),
    Sections(usize),
    LatticeLadder(usize),
}

impl LaneShape {
    /// The lane shape of `filter`; `None` for structures that always run alone (a sparse
    /// recursion's taps and a partitioned convolution's blocks are already vector work within
    /// one channel).
    pub fn of(filter: &Filter) -> Option<Self> {
        match filter {
            Filter::DirectForm2T(f) => Some(LaneShape::DirectForm2T(f.order())),
            Filter::Sections(f) => Some(LaneShape::Sections(f.section_count())),
            Filter::LatticeLadder(f) => Some(LaneShape::LatticeLadder(f.order())),
            Filter::SparseRecursion(_) | Filter::PartitionedConvolution(_) => None,
        }
    }
}

impl<const L: usize> LaneFilter<L> {
    /// Lanes from `filters`: 1 … L filters of one [`LaneShape`] (checked by the caller).
    pub fn new(filters: &[&Filter]) -> Option<Self> {
        match filters.first()? {
            Filter::DirectForm2T(_) => {
                let fs: Option<Vec<_>> = filters
                    .iter()
                    .map(|f| match f {
                        Filter::DirectForm2T(d) => Some(d),
                        _ => None,
                    })
                    .collect();
                Some(LaneFilter::DirectForm2T(LaneDirectForm::new(&fs?)))
            }
            Filter::Sections(_) => {
                let fs: Option<Vec<_>> = filters
                    .iter()
                    .map(|f| match f {
                        Filter::Sections(s) => Some(s),
                        _ => None,
                    })
                    .collect();
                Some(LaneFilter::Sections(LaneSections::new(&fs?)))
            }
            Filter::LatticeLadder(_) => {
                let fs: Option<Vec<_>> = filters
                    .iter()
                    .map(|f| match f {
                        Filter::LatticeLadder(l) => Some(l),
                        _ => None,
                    })
                    .collect();
                Some(LaneFilter::LatticeLadder(LaneLattice::new(&fs?)))
            }
            Filter::SparseRecursion(_) | Filter::PartitionedConvolution(_) => None,
        }
    }

    #[inline(always)]
    pub fn process<A: Arithmetic>(&mut self, frames: &mut [[f64; L]]) {
        match self {
            LaneFilter::DirectForm2T(f) => f.process(frames),
            LaneFilter::Sections(f) => f.process::<A>(frames),
            LaneFilter::LatticeLadder(f) => f.process(frames),
        }
    }

    pub fn step_lane(&mut self, lane: usize, x: f64) -> f64 {
        match self {
            LaneFilter::DirectForm2T(f) => f.step_lane(lane, x),
            LaneFilter::Sections(f) => f.step_lane(lane, x),
            LaneFilter::LatticeLadder(f) => f.step_lane(lane, x),
        }
    }

    pub fn reset(&mut self) {
        match self {
            LaneFilter::DirectForm2T(f) => f.reset(),
            LaneFilter::Sections(f) => f.reset(),
            LaneFilter::LatticeLadder(f) => f.reset(),
        }
    }

    pub fn reset_lane(&mut self, lane: usize) {
        match self {
            LaneFilter::DirectForm2T(f) => f.reset_lane(lane),
            LaneFilter::Sections(f) => f.reset_lane(lane),
            LaneFilter::LatticeLadder(f) => f.reset_lane(lane),
        }
    }
}
