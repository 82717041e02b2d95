//! `redress check` on every example config: the latency–error table appears exactly for the
//! paths with no exact stable causal inverse within the cap, in text, JSON and pictures, and its
//! figures hold together.

mod cli_support;

use cli_support::{code, example_configs, redress_paths, stdout};
use serde_json::Value;

#[test]
fn every_non_invertible_example_shows_its_table_and_picture() {
    let mut tables = 0;
    for config in example_configs() {
        let name = config.display().to_string();
        let dir = tempfile::tempdir().unwrap();
        let plot = dir.path().join("pictures");
        let text_run = redress_paths(&[&"check", &config, &"--plot", &plot]);
        assert!(matches!(code(&text_run), 0 | 3), "{name}");
        let text = stdout(&text_run);
        let json_run = redress_paths(&[&"check", &config, &"--json"]);
        let json: Value = serde_json::from_str(&stdout(&json_run)).unwrap();
        for (i, path) in json["paths"].as_array().unwrap().iter().enumerate() {
            let invertible = path["verdict"]["invertible"].as_bool().unwrap();
            let capped = path["inverse"]["boost_cap"].is_object();
            let table = &path["trade_off"];
            let picture = plot.join(format!("path{}_trade_off.svg", i + 1));
            if invertible && !capped {
                assert!(
                    table.is_null(),
                    "{name}: path {} has an exact inverse",
                    i + 1
                );
                assert!(!picture.exists(), "{name}");
                continue;
            }
            tables += 1;
            assert!(text.contains("latency-error trade-off"), "{name}");
            assert!(picture.exists(), "{name}: no picture for path {}", i + 1);
            let rows = table["rows"].as_array().unwrap();
            // The substitute first, then the FIR at every latency of the ladder (0 … 20 ms).
            assert_eq!(rows[0]["method"], "minimum_phase", "{name}");
            let latencies: Vec<f64> = rows[1..]
                .iter()
                .map(|r| r["latency_ms"].as_f64().unwrap())
                .collect();
            assert_eq!(latencies.first(), Some(&0.0), "{name}");
            assert!(latencies.windows(2).all(|w| w[0] < w[1]), "{name}");
            assert!((latencies.last().unwrap() - 20.0).abs() < 0.1, "{name}");
            let cap = table["boost_cap_db"].as_f64().unwrap();
            for row in rows {
                // Every candidate respects the cap (grid peak; 0.01 dB for the grid).
                assert!(
                    row["peak_boost_db"].as_f64().unwrap() <= cap + 0.01,
                    "{name}"
                );
                let residual = row["residual_error_db"].as_f64().unwrap();
                // A candidate worse than no correction would be a failed design: the residual
                // of the channel alone is at most a few dB above 0 for these links.
                assert!(residual < 3.0, "{name}: {row}");
                let pre = row["pre_ringing_db"].as_f64().unwrap_or(f64::NEG_INFINITY);
                assert!(pre <= 0.0, "{name}");
                let text_cell = format!("{:.1}", residual);
                assert!(
                    text.contains(&text_cell),
                    "{name}: {text_cell} not in the text"
                );
            }
            // The configured inverse is marked in the text and judged in the JSON.
            assert!(table["configured"].is_object(), "{name}");
            assert!(text.contains("<- configured"), "{name}");
        }
    }
    // quarry_hop, mast_relay_fir, notch_feed at least.
    assert!(tables >= 3, "{tables}");
}

// The hop with a reflection stronger than the direct sound: waiting buys correction, and at
// 10 ms the FIR is within 1 dB of its best (Source: common practice — the anticausal inverse
// of the reflection decays by 0.45/0.8 per 0.9 ms, 60 dB in about 11 ms).
#[test]
fn quarry_hop_buys_correction_with_latency() {
    let config = cli_support::repo().join("configs/quarry_hop.toml");
    let json_run = redress_paths(&[&"check", &config, &"--json"]);
    let json: Value = serde_json::from_str(&stdout(&json_run)).unwrap();
    let rows = json["paths"][0]["trade_off"]["rows"]
        .as_array()
        .unwrap()
        .clone();
    let at = |ms: f64| {
        rows.iter()
            .find(|r| {
                r["method"] == "least_squares_fir"
                    && (r["latency_ms"].as_f64().unwrap() - ms).abs() < 0.01
            })
            .unwrap()["residual_error_db"]
            .as_f64()
            .unwrap()
    };
    let minimum_phase = rows[0]["residual_error_db"].as_f64().unwrap();
    assert!(
        at(2.0) < minimum_phase - 6.0,
        "{} vs {minimum_phase}",
        at(2.0)
    );
    assert!(at(5.0) < at(2.0) - 10.0);
    assert!(at(10.0) < -40.0, "{}", at(10.0));
    // The minimum-phase substitute corrects the magnitude: its worst band is within 0.1 dB.
    assert!(rows[0]["worst_band_deviation_db"].as_f64().unwrap().abs() < 0.1);
}
