//! `redress check`: the text and JSON reports on every example config, exit codes, bad configs.

mod cli_support;

use cli_support::{
    code, example_configs, redress, redress_paths, squeeze, stderr, stdout, write_file,
};
use serde_json::Value;

fn check_json(config: &str) -> (i32, Value) {
    let output = redress(&["check", config, "--json"]);
    let json: Value = serde_json::from_str(&stdout(&output))
        .unwrap_or_else(|e| panic!("{config}: not JSON ({e}):\n{}", stdout(&output)));
    (code(&output), json)
}

fn paths(json: &Value) -> &Vec<Value> {
    json["paths"].as_array().expect("paths is a list")
}

#[test]
fn every_example_config_reports_in_text_and_json_and_they_agree() {
    for config in example_configs() {
        let name = config.display().to_string();
        let text_run = redress_paths(&[&"check", &config]);
        let text = squeeze(&stdout(&text_run));
        let (json_code, json) = check_json(&name);
        assert_eq!(
            code(&text_run),
            json_code,
            "{name}: text and JSON exit codes"
        );
        assert!(
            json_code == 0 || json_code == 3,
            "{name}: exit {json_code}\n{}",
            stderr(&text_run)
        );
        assert_eq!(json["schema"], "redress-link-report");
        assert_eq!(json["schema_version"], 4);
        assert_eq!(json["runnable"], Value::Bool(json_code == 0), "{name}");
        assert!(!paths(&json).is_empty(), "{name}: no paths");
        for path in paths(&json) {
            let label = path["label"].as_str().unwrap();
            assert!(text.contains(label), "{name}: label {label} missing");
            let summary = path["verdict"]["summary"].as_str().unwrap();
            assert!(
                text.contains(&format!("verdict: {summary}")),
                "{name}: verdict line missing for {label}"
            );
            let bulk = path["bulk_delay_samples"].as_u64().unwrap();
            assert!(
                text.contains(&format!("bulk delay {bulk} sample")),
                "{name}: bulk delay {bulk} missing from the text"
            );
            // Each zero and pole is listed with its radius = |re + j·im| (definition).
            for root in path["zeros"]
                .as_array()
                .unwrap()
                .iter()
                .chain(path["poles"].as_array().unwrap())
            {
                let (re, im) = (root["re"].as_f64().unwrap(), root["im"].as_f64().unwrap());
                let radius = root["radius"].as_f64().unwrap();
                assert!((re.hypot(im) - radius).abs() < 1e-12, "{name}: radius");
            }
        }
    }
}

/// Π |zᵢ|^mᵢ over the zeros of b_K + … + b_N z^−(N−K), which is |b_N / b_K| (Vieta's formulas,
/// common practice).
fn zero_radius_product(path: &Value) -> f64 {
    path["zeros"]
        .as_array()
        .unwrap()
        .iter()
        .map(|z| {
            z["radius"]
                .as_f64()
                .unwrap()
                .powi(z["multiplicity"].as_i64().unwrap() as i32)
        })
        .product()
}

#[test]
fn echo_line_is_invertible_with_no_bulk_delay() {
    let (exit, json) = check_json("configs/echo_line.toml");
    assert_eq!(exit, 0);
    for (path, last_tap, order) in [
        // Left leg: direct 0.92, last echo −0.15 at 2.5 ms = 120 samples.
        (&paths(&json)[0], -0.15f64, 120usize),
        // Right leg: direct 0.9, last echo 0.08 at 4.1 ms → 197 samples.
        (&paths(&json)[1], 0.08, 197),
    ] {
        assert_eq!(path["verdict"]["invertible"], true);
        assert_eq!(path["bulk_delay_samples"], 0);
        let zeros: usize = path["zeros"]
            .as_array()
            .unwrap()
            .iter()
            .map(|z| z["multiplicity"].as_u64().unwrap() as usize)
            .sum();
        assert_eq!(zeros, order, "an echo after N samples gives N zeros");
        let direct = path["channel"]["b"][0].as_f64().unwrap();
        let expected = (last_tap / direct).abs();
        let product = zero_radius_product(path);
        assert!(
            (product / expected - 1.0).abs() < 1e-6,
            "Vieta: {product} vs {expected}"
        );
        assert_eq!(path["inverse"]["residual_delay_samples"], 0);
        assert!(path["realization"].is_object(), "realized");
    }
    let text = stdout(&redress(&["check", "configs/echo_line.toml"]));
    assert!(text.contains("verdict: a stable causal inverse exists"));
    assert!(text.contains("summary: every path has a stable inverse ready to run"));
}

// Source: the config's own taps (configs/echo_line.toml) — the exact inverse of
// g₀ + Σ gₖz^−Dₖ is 1/(g₀ + Σ gₖz^−Dₖ): one numerator tap and one recursive tap per echo, at
// order max Dₖ, where a direct form touches b₀ and every aₖ past a₀: order + 1 coefficients a
// sample.
#[test]
fn echo_line_runs_as_sparse_recursions_and_says_what_they_touch() {
    let (exit, json) = check_json("configs/echo_line.toml");
    assert_eq!(exit, 0);
    for (path, taps, order) in [(&paths(&json)[0], 3u64, 120u64), (&paths(&json)[1], 4, 197)] {
        let r = &path["realization"];
        assert_eq!(r["structure"], "sparse_recursion");
        assert_eq!(r["sparse"]["taps_touched"], taps);
        assert_eq!(r["sparse"]["order"], order);
        assert_eq!(r["sparse"]["dense_taps"], order + 1);
        assert_eq!(r["pole_check"], "dominant_leading_tap");
        assert!(r["max_pole_radius"].as_f64().unwrap() < 1.0);
    }
    let text = squeeze(&stdout(&redress(&["check", "configs/echo_line.toml"])));
    assert!(
        text.contains("realization sparse recursion (`sparse_recursion`), f32 coefficients"),
        "{text}"
    );
    assert!(text.contains("touches 3 of the 121 coefficients"), "{text}");
    assert!(text.contains("touches 4 of the 198 coefficients"), "{text}");
    assert!(
        text.contains("runs as y[n] = 1.08696 x[n] - 0.304348 y[n-37]"),
        "{text}"
    );
}

#[test]
fn paging_delay_leaves_six_samples_and_inverts_the_rest() {
    let (exit, json) = check_json("configs/paging_delay.toml");
    assert_eq!(exit, 0);
    let path = &paths(&json)[0];
    assert_eq!(path["bulk_delay_samples"], 6);
    // 6 samples at 16 kHz.
    assert!((path["bulk_delay_ms"].as_f64().unwrap() - 0.375).abs() < 1e-12);
    // Zeros of 0.7 + 0.25 z⁻¹ + 0.05 z⁻²: a conjugate pair with |z|² = 0.05/0.7 and
    // re = −0.25/1.4 (quadratic formula; common practice).
    let zeros = path["zeros"].as_array().unwrap();
    assert_eq!(zeros.len(), 2);
    for zero in zeros {
        assert!((zero["radius"].as_f64().unwrap() - (0.05f64 / 0.7).sqrt()).abs() < 1e-12);
        assert!((zero["re"].as_f64().unwrap() + 0.25 / 1.4).abs() < 1e-12);
    }
    let inverse = &path["inverse"];
    assert_eq!(inverse["residual_delay_samples"], 6);
    // G = (1 − 0.15 z⁻¹)/(0.7 + 0.25 z⁻¹ + 0.05 z⁻²) boosts 7.2 dB at 8 kHz, above the default
    // band's 7.2 kHz (90 % of half of 16 kHz): the inverse is redesigned to keep to the band.
    let band = &inverse["correction_band"];
    assert_eq!(band["source"], "default");
    assert_eq!(band["limited"], true);
    assert!((band["high_hz"].as_f64().unwrap() - 7200.0).abs() < 1e-9);
    assert!((band["outside_before_db"].as_f64().unwrap() - 7.23).abs() < 0.01);
    assert!(band["largest_boost_outside_db"].as_f64().unwrap() <= 0.1);
    let text = squeeze(&stdout(&redress(&["check", "configs/paging_delay.toml"])));
    assert!(text.contains("bulk delay 6 samples (0.375 ms)"), "{text}");
    assert!(text.contains("residual delay 6 samples"), "{text}");
}

#[test]
fn quarry_hop_names_the_zeros_outside_the_circle() {
    let (_, json) = check_json("configs/quarry_hop.toml");
    let path = &paths(&json)[0];
    assert_eq!(path["verdict"]["invertible"], false);
    let summary = path["verdict"]["summary"].as_str().unwrap();
    assert!(
        summary.starts_with("no stable causal inverse — "),
        "{summary}"
    );
    assert!(summary.contains("outside the unit circle"), "{summary}");
    let blocking = path["verdict"]["blocking_zeros"].as_array().unwrap();
    assert!(!blocking.is_empty());
    for zero in blocking {
        let radius = zero["radius"].as_f64().unwrap();
        assert!(radius > 1.0);
        assert!((zero["beyond"].as_f64().unwrap() - (radius - 1.0)).abs() < 1e-12);
    }
    // A reflection 0.8/0.45 stronger than the direct path, 43 samples later: the zeros of
    // 0.45 + 0.8 z⁻⁴³ alone would sit at radius (0.8/0.45)^(1/43) ≈ 1.0135 (common practice);
    // the weak third tap moves them only slightly.
    let largest = blocking
        .iter()
        .map(|z| z["radius"].as_f64().unwrap())
        .fold(0.0, f64::max);
    assert!((1.005..1.03).contains(&largest), "{largest}");
    // Whatever the policy made of it, an exact inverse it is not.
    if let Some(method) = path["inverse"]["method"].as_str() {
        assert_ne!(method, "exact");
    }
}

#[test]
fn an_invalid_config_exits_2_with_file_line_and_help() {
    let dir = tempfile::tempdir().unwrap();
    let config = write_file(
        dir.path(),
        "typo.toml",
        "[link]\nsample_rate_hz = 48000\nchannel_count = 1\n\n[[path]]\nchannels = [0]\n\
         difference_equation = { b = [1.0, 0.5], a = [1.0] }\nstructure = \"spiral\"\n",
    );
    let output = redress_paths(&[&"check", &config]);
    assert_eq!(code(&output), 2, "{}", stderr(&output));
    let message = stderr(&output);
    assert!(message.contains("typo.toml:8:"), "{message}");
    assert!(message.contains("structure"), "{message}");
    assert!(message.contains("help:"), "{message}");
    assert!(stdout(&output).is_empty());
}

#[test]
fn a_missing_config_exits_2_and_names_it() {
    let output = redress(&["check", "configs/no_such_link.toml"]);
    assert_eq!(code(&output), 2);
    assert!(stderr(&output).contains("no_such_link.toml"));
}

#[test]
fn an_unstable_channel_is_valid_but_not_runnable() {
    // A pole at z = 1.2 (1 − 1.2 z⁻¹ in the denominator): the channel itself would blow up.
    let dir = tempfile::tempdir().unwrap();
    let config = write_file(
        dir.path(),
        "unstable.toml",
        "[link]\nsample_rate_hz = 48000\nchannel_count = 1\n\n[[path]]\n\
         label = \"feedback loop in the monitor chain\"\nchannels = [0]\n\
         difference_equation = { b = [1.0, 0.3], a = [1.0, -1.2] }\n",
    );
    let output = redress_paths(&[&"check", &config]);
    assert_eq!(code(&output), 3, "{}", stderr(&output));
    let text = stdout(&output);
    assert!(
        text.contains("verdict: the channel itself is unstable"),
        "{text}"
    );
    assert!(
        text.contains("summary: the link cannot run as configured"),
        "{text}"
    );
}
