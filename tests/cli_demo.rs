//! `redress demo`: runs with no files and no sound card, and prints both error figures.

mod cli_support;

use cli_support::{code, number_after, redress, stderr, stdout};

#[test]
fn default_demo_shows_the_echo_line_undone() {
    let run = redress(&["demo"]);
    assert_eq!(code(&run), 0, "{}", stderr(&run));
    let text = stdout(&run);
    // The check summary comes first.
    assert!(
        text.contains("verdict: a stable causal inverse exists"),
        "{text}"
    );
    let before = number_after(&text, "error before equalizing");
    let after = number_after(&text, "error after equalizing");
    // The echoes (about −10 dB and −16 dB below the direct sound, common practice: 20·log10 of the
    // gain ratios) leave the received signal roughly −10 dB from the original. The exact inverse
    // leaves only rounding: its f32 coefficients (relative step 2⁻²⁴, about −144 dB) moved by the
    // sensitivity of poles at radius 0.99 (about 1/(1 − r) = 100, +40 dB) give roughly −104 dB;
    // −90 dB leaves a margin.
    assert!((-20.0..0.0).contains(&before), "before {before}\n{text}");
    assert!(after < -90.0, "after {after}\n{text}");
    assert!(after < before - 60.0);
}

#[test]
fn demo_on_another_config_and_length() {
    let run = redress(&["demo", "configs/rack_feed_order6.toml", "--seconds", "1"]);
    assert_eq!(code(&run), 0, "{}", stderr(&run));
    let text = stdout(&run);
    assert!(text.contains("demo: 1 s of generated programme"), "{text}");
    // The default band leaves the link's top tenth below 24 kHz and everything under 20 Hz as
    // it was, so the broadband error keeps what the link does there (-25 dB measured; the
    // exact inverse over the whole axis reached below -100 dB).
    let after = number_after(&text, "error after equalizing");
    let before = number_after(&text, "error before equalizing");
    assert!(
        after < -20.0 && after < before - 20.0,
        "after {after}\n{text}"
    );
}

#[test]
fn demo_of_a_link_with_zeros_outside_runs_its_substitute() {
    // The quarry hop has no stable causal inverse; the minimum-phase substitute corrects the
    // magnitude but leaves an all-pass phase error, so the error after is far from the exact
    // case, yet it runs and reports both figures.
    let run = redress(&["demo", "configs/quarry_hop.toml", "--seconds", "1"]);
    assert_eq!(code(&run), 0, "{}", stderr(&run));
    let text = stdout(&run);
    assert!(text.contains("verdict: no stable causal inverse"), "{text}");
    assert!(text.contains("minimum-phase substitute"), "{text}");
    let after = number_after(&text, "error after equalizing");
    assert!(after > -60.0, "an all-pass residual cannot vanish: {after}");
}

#[test]
fn demo_refuses_a_silly_length() {
    let run = redress(&["demo", "--seconds", "0"]);
    assert_eq!(code(&run), 2);
    assert!(stderr(&run).contains("--seconds"), "{}", stderr(&run));
}
