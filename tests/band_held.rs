//! No inverse boosts outside its correction band, on every link the project ships and on the
//! measured-scale rooms: each example config in configs/, and the two room responses of the
//! long-channel fixtures (256 and 1024 taps, made by pyroomacoustics 0.10.1's image-source
//! model in scripts/reference/make_long_channel_fixtures.py). Each path is designed twice: with
//! the band its config names (whole-axis bands have no outside and are skipped), and with the
//! default band a config without one gets (20 Hz to 0.9 of half the sample rate).
//!
//! Tolerance: `OUTSIDE_TOLERANCE_DB` (0.1 dB), the boost outside the band the design leaves
//! alone; judged on the design's own grid (`band_figures`: 16 points across the band's roll and
//! 8 per coefficient). Source: common practice (correct only where the link is known; outside
//! the trusted band leave the signal at unity gain).

use std::path::PathBuf;

use redress::design::{band_figures, correction_band, OUTSIDE_TOLERANCE_DB};
use redress::model::config::{load_link, parse_link};
use redress::model::Link;
use redress::pipeline::plan_link;

fn repo() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn example_configs() -> Vec<PathBuf> {
    let mut configs: Vec<PathBuf> = std::fs::read_dir(repo().join("configs"))
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|e| e == "toml"))
        .collect();
    configs.sort();
    assert!(
        configs.len() >= 8,
        "the example configs are where they were"
    );
    configs
}

/// A room of the long-channel fixtures as a one-path FIR link.
fn room(name: &str) -> Link {
    let path = repo().join(format!("tests/fixtures/long_channels/{name}.json"));
    let doc: serde_json::Value = serde_json::from_str(&std::fs::read_to_string(path).unwrap())
        .expect("the long-channel fixture is JSON");
    let b: Vec<String> = doc["b"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| format!("{:e}", v.as_f64().unwrap()))
        .collect();
    let rate = doc["sample_rate"].as_f64().unwrap();
    let text = format!(
        "[link]\nsample_rate_hz = {rate}\nchannel_count = 1\n\n[[path]]\nlabel = \"{name}\"\n\
         channels = [0]\ndifference_equation = {{ b = [{}], a = [1.0] }}\n",
        b.join(", ")
    );
    parse_link(&text, None).unwrap_or_else(|e| panic!("{name}: {e}"))
}

/// Every path's largest gain outside its band; `label: figure` for those above the tolerance.
fn boosts_outside(name: &str, link: &Link) -> Vec<String> {
    let plan = plan_link(link);
    let mut judged = Vec::new();
    for (path, planned) in link.paths.iter().zip(&plan.paths) {
        let band = correction_band(&path.inverse, link.sample_rate);
        let design = match &planned.design {
            Some(Ok(design)) => design,
            other => panic!("{name} / {}: no design ({other:?})", path.label),
        };
        let figures = band_figures(&design.inverse.b, &design.inverse.a, &band);
        if let Some(outside) = figures.outside {
            eprintln!(
                "{name} / {}: band {:.1}-{:.0} Hz, largest gain outside {:+.3} dB at {:.1} Hz",
                path.label, band.low_hz, band.high_hz, outside.db, outside.hz
            );
            if outside.db > OUTSIDE_TOLERANCE_DB {
                judged.push(format!(
                    "{name} / {}: {:+.3} dB at {:.1} Hz",
                    path.label, outside.db, outside.hz
                ));
            }
        }
    }
    judged
}

fn with_default_band(mut link: Link) -> Link {
    for path in &mut link.paths {
        path.inverse.correction_band_hz = None;
    }
    link
}

#[test]
fn example_configs_never_boost_outside_their_band() {
    let mut over = Vec::new();
    for config in example_configs() {
        let name = config.file_name().unwrap().to_string_lossy().to_string();
        let link = load_link(&config).unwrap();
        over.extend(boosts_outside(&name, &link));
        over.extend(boosts_outside(
            &format!("{name} (default band)"),
            &with_default_band(link),
        ));
    }
    assert!(over.is_empty(), "boost outside the band: {over:#?}");
}

#[test]
fn measured_rooms_never_boost_outside_the_default_band() {
    let mut over = Vec::new();
    for name in ["room_256", "room_1024"] {
        over.extend(boosts_outside(name, &room(name)));
    }
    assert!(over.is_empty(), "boost outside the band: {over:#?}");
}
