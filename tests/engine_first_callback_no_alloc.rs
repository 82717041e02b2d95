//! The first audio callback allocates nothing even when the vector unit is capped by the
//! environment (`REDRESS_KERNELS`): the unit is chosen while the filter set is built, on the
//! control side, never by the first block the audio thread runs.
//!
//! Its own test binary: the choice is made once per process, so no other test may make it
//! first.

mod common;

use assert_no_alloc::{assert_no_alloc, reset_violation_count, violation_count, AllocDisabler};
use common::sine;
use redress::engine::{engine_pair, EngineSettings, Equalizer};
use redress::realize::Filter;

#[global_allocator]
static ALLOCATOR: AllocDisabler = AllocDisabler;

// Source: common practice for real-time audio — no (de)allocation on the audio thread, the
// first callback included.
#[test]
fn first_callback_with_the_kernels_capped_allocates_nothing() {
    // Set before anything in this process has asked which unit to use. Reading a set variable
    // allocates (the value is copied into a String), so a choice made on the audio thread shows.
    // Sound: this test binary runs this one test, and no other thread reads the environment
    // while it is set.
    std::env::set_var("REDRESS_KERNELS", "avx2");
    // A mono direct form of order 2: a set that never consults the unit while it is grouped.
    let filter = Filter::unvalidated_direct_form(vec![1.0, -0.5], vec![1.0, -0.3]);
    let set = Equalizer::from_filters(vec![filter], 2.0, 1);
    let (mut engine, _control) = engine_pair(EngineSettings::defaults(1, 48_000.0), Some(set));
    let input = sine(256, 1, 440.0, 0.3, 0);
    let mut output = vec![0.0f32; input.len()];
    reset_violation_count();
    assert_no_alloc(|| engine.process(&input, &mut output));
    assert_eq!(
        violation_count(),
        0,
        "the first callback allocated (the vector unit was chosen on the audio thread)"
    );
    // The detector itself works: one allocation inside the zone is counted.
    assert_no_alloc(|| drop(std::hint::black_box(Vec::<u8>::with_capacity(8))));
    assert!(violation_count() > 0, "the allocation detector saw nothing");
}
