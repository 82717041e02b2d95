//! Is the link linear and time-invariant? The verdict on a sweep measurement: harmonic
//! distortion per band, the change between repeated captures, the thresholds beyond which an
//! inverse filter cannot do its job, and the words that tell the user so.
//!
//! An inverse filter undoes what a fixed linear filter did. It cannot remove harmonics (they
//! are new frequencies, not a changed gain) and a filter fitted to one state of a link that
//! changes is wrong for the others.

use std::fmt::Write;

use serde_json::{json, Value};

use super::capture_change::{capture_change, BandChange, CaptureChange};
use super::harmonic_distortion::{
    harmonic_distortion, BandDistortion, HarmonicDistortion, HarmonicLevel, HIGHEST_HARMONIC,
};
use super::sweep_law::{sweep_law, SweepLaw};
use crate::numeric::fractional_octave::Band;

/// Total harmonic distortion above this (dB below the fundamental) is flagged: −40 dB is 1 %,
/// the figure loudspeaker and amplifier ratings are commonly quoted at (common practice).
pub const DISTORTION_LIMIT_DB: f64 = -40.0;
/// A spread between captures above this (dB below the response) is flagged: −20 dB is a
/// 10 % change in amplitude, about ±0.9 dB, more than a correction aimed at 1 dB can absorb
/// (our choice, stated in the README).
pub const CHANGE_LIMIT_DB: f64 = -20.0;
/// The report and the fitted config speak in octave bands (1/1), few enough to read.
pub const REPORT_FRACTION: u32 = 1;

/// The check of one response channel.
#[derive(Debug, Clone, PartialEq)]
pub struct ChannelLinearity {
    pub channel: usize,
    /// The sweep read from the stimulus; `None` when the stimulus is not an exponential sweep
    /// (a maximum-length sequence cannot separate harmonics).
    pub sweep: Option<SweepLaw>,
    pub distortion: Option<HarmonicDistortion>,
    /// `None` for a single capture.
    pub change: Option<CaptureChange>,
    /// Only bands within this range (the channel's trusted band) are judged.
    pub judged_hz: Option<(f64, f64)>,
}

/// What one recording channel needs for the check.
#[derive(Debug, Clone, Copy)]
pub struct LinearityInput<'a> {
    pub channel: usize,
    /// One period of the stimulus, as played into this channel.
    pub stimulus: &'a [f64],
    /// The captures averaged, aligned with `stimulus`.
    pub averaged: &'a [f64],
    /// The whole recording, capture i from i·`period` on.
    pub recording: &'a [f64],
    pub period: usize,
    pub repeats: usize,
    pub sample_rate: f64,
    pub judged_hz: Option<(f64, f64)>,
}

/// Runs the check on one channel.
pub fn check_linearity(input: &LinearityInput<'_>) -> ChannelLinearity {
    let sweep = sweep_law(input.stimulus, input.sample_rate);
    let distortion = sweep.as_ref().and_then(|law| {
        harmonic_distortion(
            input.stimulus,
            law,
            input.averaged,
            input.sample_rate,
            REPORT_FRACTION,
        )
    });
    let change = sweep.as_ref().and_then(|law| {
        capture_change(
            input.stimulus,
            law,
            input.recording,
            input.period,
            input.repeats,
            input.sample_rate,
            REPORT_FRACTION,
        )
    });
    ChannelLinearity {
        channel: input.channel,
        sweep,
        distortion,
        change,
        judged_hz: input.judged_hz,
    }
}

impl ChannelLinearity {
    fn judged(&self, band: &Band) -> bool {
        self.judged_hz
            .is_none_or(|(low, high)| band.lies_within(low, high))
    }

    /// Bands (within the judged range) whose total distortion, clear of the noise, passes
    /// [`DISTORTION_LIMIT_DB`].
    pub fn distorted_bands(&self) -> Vec<&BandDistortion> {
        self.distortion.as_ref().map_or_else(Vec::new, |d| {
            d.bands
                .iter()
                .filter(|b| self.judged(&b.band))
                .filter(|b| {
                    b.total
                        .is_some_and(|t| t.measured() && t.level_db > DISTORTION_LIMIT_DB)
                })
                .collect()
        })
    }

    /// Bands (within the judged range) whose spread between captures, clear of the noise,
    /// passes [`CHANGE_LIMIT_DB`].
    pub fn changed_bands(&self) -> Vec<&BandChange> {
        self.change.as_ref().map_or_else(Vec::new, |c| {
            c.bands
                .iter()
                .filter(|b| self.judged(&b.band))
                .filter(|b| b.beyond_noise() && b.spread_db > CHANGE_LIMIT_DB)
                .collect()
        })
    }

    /// Plain warnings for the user: what was found, and that an inverse cannot undo it.
    pub fn warnings(&self) -> Vec<String> {
        let mut out = Vec::new();
        let c = self.channel;
        let distorted = self.distorted_bands();
        if let Some(worst) = distorted.iter().max_by(|a, b| {
            let level = |x: &&&BandDistortion| x.total.map_or(f64::MIN, |t| t.level_db);
            level(a).total_cmp(&level(b))
        }) {
            let level = worst.total.map_or(f64::NAN, |t| t.level_db);
            out.push(format!(
                "channel {c}: the link distorts: total harmonic distortion reaches {} ({:.1} %) \
                 of the fundamental at {} Hz, and passes the limit of {} (1 %) in {} band(s); \
                 an inverse filter cannot undo distortion: lower the level into the link, or \
                 repair the part that distorts",
                db(level),
                100.0 * 10f64.powf(level / 20.0),
                hz(worst.band.nominal_mid_hz()),
                db(DISTORTION_LIMIT_DB),
                distorted.len(),
            ));
        }
        let changed = self.changed_bands();
        if let Some(worst) = changed
            .iter()
            .max_by(|a, b| a.spread_db.total_cmp(&b.spread_db))
        {
            let captures = self.change.as_ref().map_or(0, |x| x.captures);
            out.push(format!(
                "channel {c}: the link changed between the {captures} captures: their responses \
                 differ by up to {} of the response ({} band(s), worst at {} Hz; limit {}); \
                 an inverse filter fitted to their mean cannot follow a link that changes (a \
                 fading path, a moving reflection): find and remove the cause, or correct only \
                 the bands that stay put",
                db(worst.spread_db),
                changed.len(),
                hz(worst.band.nominal_mid_hz()),
                db(CHANGE_LIMIT_DB)
            ));
        }
        out
    }
}

fn db(value: f64) -> String {
    if value.is_finite() {
        format!("{value:.1} dB")
    } else {
        "nothing measurable".to_string()
    }
}

fn hz(value: f64) -> String {
    if value >= 1000.0 {
        format!("{}k", value / 1000.0)
    } else {
        format!("{value}")
    }
}

fn level_text(level: Option<HarmonicLevel>) -> String {
    match level {
        None => "-".to_string(),
        Some(l) if l.measured() => format!("{:.1}", l.level_db),
        Some(l) => format!("<{:.0}", l.floor_db.unwrap_or(l.level_db) + 6.0),
    }
}

/// The check as lines of text, each starting with `prefix` (two spaces for the terminal, "# "
/// for the fitted config's comments).
pub fn describe_linearity(channels: &[ChannelLinearity], prefix: &str) -> String {
    let mut t = String::new();
    for ch in channels {
        let c = ch.channel;
        let Some(law) = ch.sweep else {
            let _ = writeln!(
                t,
                "{prefix}channel {c} linearity: not checked (the stimulus is not an exponential \
                 sweep; harmonics are separated only from one)"
            );
            continue;
        };
        match &ch.distortion {
            None => {
                let _ = writeln!(
                    t,
                    "{prefix}channel {c} linearity: not checked (the sweep {:.0}-{:.0} Hz is too \
                     short to separate harmonics 2 to {HIGHEST_HARMONIC})",
                    law.start_hz, law.end_hz
                );
            }
            Some(d) => {
                let range = d
                    .dynamic_range_db
                    .map_or("not measured".to_string(), |v| format!("{v:.1} dB"));
                let _ = writeln!(
                    t,
                    "{prefix}channel {c} harmonic distortion (dB below the fundamental, per \
                     octave band; '<x' = below the floor of noise and leakage; limit {}); impulse response \
                     peak-to-noise {range}",
                    db(DISTORTION_LIMIT_DB)
                );
                let _ = writeln!(
                    t,
                    "{prefix}  band Hz    2nd      3rd      total (2nd-{HIGHEST_HARMONIC}th)"
                );
                for b in &d.bands {
                    let _ = writeln!(
                        t,
                        "{prefix}  {:<9}{:<9}{:<9}{}",
                        hz(b.band.nominal_mid_hz()),
                        level_text(b.second),
                        level_text(b.third),
                        level_text(b.total)
                    );
                }
            }
        }
        if let Some(change) = &ch.change {
            let worst = change
                .bands
                .iter()
                .filter(|b| ch.judged(&b.band))
                .max_by(|a, b| a.spread_db.total_cmp(&b.spread_db));
            if let Some(w) = worst {
                let _ = writeln!(
                    t,
                    "{prefix}channel {c} change between {} captures: largest spread {} of the \
                     response at {} Hz, coherence {:.4} (noise alone: {}; limit {}): {}",
                    change.captures,
                    db(w.spread_db),
                    hz(w.band.nominal_mid_hz()),
                    w.coherence(),
                    w.floor_db.map_or("not measured".to_string(), db),
                    db(CHANGE_LIMIT_DB),
                    if ch.changed_bands().is_empty() {
                        "the link held still"
                    } else {
                        "the link CHANGED"
                    }
                );
            }
        }
    }
    t
}

/// The check as JSON, for the report folder.
pub fn linearity_json(channels: &[ChannelLinearity]) -> Value {
    let level = |l: Option<HarmonicLevel>| match l {
        None => Value::Null,
        Some(l) => json!({
            "level_db": l.level_db,
            "floor_db": l.floor_db,
            "above_floor": l.measured(),
        }),
    };
    let list: Vec<Value> = channels
        .iter()
        .map(|ch| {
            json!({
                "channel": ch.channel,
                "sweep": ch.sweep.map(|s| json!({
                    "start_hz": s.start_hz,
                    "end_hz": s.end_hz,
                    "rate_seconds": s.rate_seconds,
                })),
                "distortion": ch.distortion.as_ref().map(|d| json!({
                    "band_fraction": d.fraction,
                    "dynamic_range_db": d.dynamic_range_db,
                    "bands": d.bands.iter().map(|b| json!({
                        "nominal_hz": b.band.nominal_mid_hz(),
                        "lower_hz": b.band.lower_hz,
                        "upper_hz": b.band.upper_hz,
                        "second": level(b.second),
                        "third": level(b.third),
                        "total": level(b.total),
                    })).collect::<Vec<_>>(),
                })),
                "change": ch.change.as_ref().map(|c| json!({
                    "captures": c.captures,
                    "band_fraction": c.fraction,
                    "bands": c.bands.iter().map(|b| json!({
                        "nominal_hz": b.band.nominal_mid_hz(),
                        "spread_db": b.spread_db,
                        "coherence": b.coherence(),
                        "floor_db": b.floor_db,
                        "beyond_noise": b.beyond_noise(),
                    })).collect::<Vec<_>>(),
                })),
                "distorted": !ch.distorted_bands().is_empty(),
                "changed": !ch.changed_bands().is_empty(),
                "warnings": ch.warnings(),
            })
        })
        .collect();
    json!({
        "distortion_limit_db": DISTORTION_LIMIT_DB,
        "change_limit_db": CHANGE_LIMIT_DB,
        "channels": list,
    })
}
