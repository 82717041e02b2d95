//! Library results → the report's data ([`super::schema`]).

use std::f64::consts::TAU;

use super::difference_equation::difference_equation;
use super::numbers::significant;
use super::schema::{
    AllPassEntry, BlockingZero, BoostCapEntry, CepstralEntry, Coefficients, CorrectionBandEntry,
    CountEntry, FirEntry, InverseEntry, LinkReport, MovedZeroEntry, PartitionedEntry, PathReport,
    RealizationEntry, RootEntry, SparseEntry, StepDownEntry, StructureRefusalEntry,
    StructureSwitchEntry, VerdictEntry, SCHEMA_VERSION,
};
use super::trade_off::{knee_entry, method_key, trade_off_entry};
use crate::analysis::{
    AnalysisError, ChannelAnalysis, PlacedRoot, Placement, Verdict, ZeroCount,
    LISTED_ROOTS_MAX_ORDER,
};
use crate::design::{DesignError, InverseDesign, TradeOff};
use crate::model::{CoefficientPrecision, ModelForm, Path, Structure, TransferFunction};
use crate::pipeline::{LinkPlan, StructureRefusal, StructureSwitch};
use crate::realize::{dense_direct_form_taps, PoleEvidence, Realization, StructureCoefficients};

/// The whole link's report. `source` is the config file the link came from, if any.
pub fn link_report(plan: &LinkPlan, source: Option<&std::path::Path>) -> LinkReport {
    let paths = plan
        .paths
        .iter()
        .map(|p| {
            let realization = p.realization.as_ref().map(|r| match r {
                Ok(r) => Ok(realization(r, p.switched.as_ref(), &p.refused)),
                Err(e) => Err(e.to_string()),
            });
            path_report(
                &p.path,
                plan.sample_rate,
                &p.analysis,
                p.design.as_ref(),
                realization,
                p.trade_off.as_ref(),
            )
        })
        .collect();
    LinkReport {
        schema: "redress-link-report",
        schema_version: SCHEMA_VERSION,
        source: source.map(|s| s.display().to_string()),
        sample_rate_hz: plan.sample_rate,
        channel_count: plan.channel_count,
        runnable: plan.is_runnable(),
        problems: plan.problems(),
        paths,
    }
}

/// The config's spelling of a structure.
fn structure_key(structure: Structure) -> String {
    match structure {
        Structure::DirectForm2T => "direct_form_2t",
        Structure::Sections => "sections",
        Structure::LatticeLadder => "lattice_ladder",
        Structure::SparseRecursion => "sparse_recursion",
        Structure::PartitionedConvolution => "partitioned_convolution",
    }
    .to_string()
}

fn realization(
    r: &Realization,
    switched: Option<&StructureSwitch>,
    refused: &[StructureRefusal],
) -> RealizationEntry {
    RealizationEntry {
        structure: structure_key(r.structure),
        structure_name: r.structure.name().to_string(),
        precision: match r.precision {
            CoefficientPrecision::F32 => "f32",
            CoefficientPrecision::F64 => "f64",
        }
        .to_string(),
        coefficients: serde_json::to_value(&r.coefficients).unwrap_or(serde_json::Value::Null),
        max_pole_radius: r.max_pole_radius,
        switched_from: switched.map(|s| StructureSwitchEntry {
            requested: structure_key(s.requested),
            requested_name: s.requested.name().to_string(),
            requested_by: if s.configured { "config" } else { "default" }.to_string(),
            // The realization error's help line advises the very switch that was made.
            reason: s
                .reason
                .split("\n  help:")
                .next()
                .unwrap_or_default()
                .to_string(),
        }),
        refused_first: refused
            .iter()
            .map(|f| StructureRefusalEntry {
                structure: structure_key(f.structure),
                reason: f.reason.clone(),
            })
            .collect(),
        pole_check: match r.pole_evidence {
            PoleEvidence::Roots => "roots",
            PoleEvidence::DominantLeadingTap { .. } => "dominant_leading_tap",
            PoleEvidence::NoPoles => "no_poles",
        }
        .to_string(),
        sparse: sparse_entry(r),
        partitioned: partitioned_entry(r),
    }
}

fn sparse_entry(r: &Realization) -> Option<SparseEntry> {
    let StructureCoefficients::SparseRecursion {
        order,
        numerator,
        denominator,
    } = &r.coefficients
    else {
        return None;
    };
    let runs = r.coefficients.transfer_function();
    Some(SparseEntry {
        taps_touched: numerator.len() + denominator.len(),
        order: *order,
        dense_taps: dense_direct_form_taps(&runs.b, &runs.a),
        runs_as: difference_equation(&runs.b, &runs.a),
        recursive_tap_sum: match r.pole_evidence {
            PoleEvidence::DominantLeadingTap { others } => Some(others),
            _ => None,
        },
    })
}

fn partitioned_entry(r: &Realization) -> Option<PartitionedEntry> {
    let StructureCoefficients::PartitionedConvolution {
        taps,
        partition_size,
    } = &r.coefficients
    else {
        return None;
    };
    let b = (*partition_size).max(1);
    Some(PartitionedEntry {
        taps: taps.len(),
        head_taps: taps.len().min(b),
        partition_size: b,
        fft_size: 2 * b,
        fft_partitions: taps.len().saturating_sub(b).div_ceil(b),
    })
}

/// Up to this many radii are quoted in a verdict sentence; the rest are counted.
const RADII_QUOTED: usize = 4;

/// Everything about one path. `realization` is the realized structure or the reason it failed,
/// `None` when no realization was attempted; `trade_off` the latency–error table, when made.
pub fn path_report(
    path: &Path,
    sample_rate: f64,
    analysis: &Result<ChannelAnalysis, AnalysisError>,
    design: Option<&Result<InverseDesign, DesignError>>,
    realization: Option<Result<RealizationEntry, String>>,
    trade_off: Option<&Result<TradeOff, DesignError>>,
) -> PathReport {
    let ms = |samples: usize| samples as f64 * 1_000.0 / sample_rate;
    let (bulk_delay, zeros, poles, channel_stable, step_down, analysis_error) = match analysis {
        Ok(a) => (
            a.bulk_delay,
            roots(&a.zeros, sample_rate),
            roots(&a.poles, sample_rate),
            Some(a.channel_stable),
            Some(step_down(a)),
            None,
        ),
        Err(e) => (
            crate::numeric::poly::leading_zeros(&path.channel.b),
            Vec::new(),
            Vec::new(),
            None,
            None,
            Some(e.to_string()),
        ),
    };
    let (inverse, design_error) = match design {
        Some(Ok(d)) => (Some(inverse(d, sample_rate)), None),
        Some(Err(e)) => (None, Some(e.to_string())),
        None => (None, None),
    };
    let (realization, realize_error) = match realization {
        Some(Ok(r)) => (Some(r), None),
        Some(Err(e)) => (None, Some(e)),
        None => (None, None),
    };
    PathReport {
        label: path.label.clone(),
        channels: path.channels.clone(),
        form: form_key(path.form).to_string(),
        form_name: form_words(path.form).to_string(),
        channel: coefficients(&path.channel),
        bulk_delay_samples: bulk_delay,
        bulk_delay_ms: ms(bulk_delay),
        analysis_error,
        zeros,
        poles,
        zero_count: analysis.as_ref().ok().map(|a| count_entry(&a.zero_count)),
        pole_count: analysis.as_ref().ok().map(|a| count_entry(&a.pole_count)),
        channel_stable,
        step_down,
        verdict: verdict(analysis, sample_rate),
        inverse,
        design_error,
        runnable: realization.is_some(),
        realization,
        realize_error,
        trade_off: trade_off.and_then(|t| t.as_ref().ok()).map(trade_off_entry),
        trade_off_error: trade_off
            .and_then(|t| t.as_ref().err())
            .map(|e| e.to_string()),
    }
}

/// The JSON spelling of a model form: the config's key for it.
pub fn form_key(form: ModelForm) -> &'static str {
    match form {
        ModelForm::DifferenceEquation => "difference_equation",
        ModelForm::ZerosPoles => "roots",
        ModelForm::EchoPaths => "echoes",
        ModelForm::Sections => "sections",
    }
}

/// A model form in plain words.
pub fn form_words(form: ModelForm) -> &'static str {
    match form {
        ModelForm::DifferenceEquation => "a difference equation",
        ModelForm::ZerosPoles => "zeros and poles",
        ModelForm::EchoPaths => "echo paths",
        ModelForm::Sections => "second-order sections",
    }
}

fn coefficients(tf: &TransferFunction) -> Coefficients {
    Coefficients {
        b: tf.b.clone(),
        a: tf.a.clone(),
    }
}

fn count_entry(c: &ZeroCount) -> CountEntry {
    let how = if c.listed {
        "from the roots (companion-matrix eigenvalues)".to_string()
    } else {
        let grid = c
            .winding_within
            .or(c.winding_inside)
            .map_or("an FFT grid".to_string(), |w| {
                format!("an FFT grid of {} points", w.grid_points)
            });
        let check = match (c.step_down, c.step_down_trusted) {
            (Some(_), true) => "; cross-checked by the step-down count".to_string(),
            (Some(s), false) => format!(
                "; the step-down count is not trusted here (rounding growth {:.1e})",
                s.growth
            ),
            (None, _) => "; the step-down count is undecided (|k| = 1)".to_string(),
        };
        format!(
            "counted by the argument principle on {grid}{check}; not listed: the roots are \
             computed only up to order {LISTED_ROOTS_MAX_ORDER}"
        )
    };
    CountEntry {
        inside: c.inside,
        on_circle: c.on_circle,
        outside: c.outside,
        listed: c.listed,
        how,
    }
}

fn roots(placed: &[PlacedRoot], sample_rate: f64) -> Vec<RootEntry> {
    placed.iter().map(|p| root(p, sample_rate)).collect()
}

fn root(p: &PlacedRoot, sample_rate: f64) -> RootEntry {
    RootEntry {
        re: p.root.value.re,
        im: p.root.value.im,
        radius: p.root.radius(),
        angle_rad: p.root.angle(),
        angle_hz: p.root.angle() * sample_rate / TAU,
        multiplicity: p.root.multiplicity,
        placement: match p.placement {
            Placement::Inside => "inside",
            Placement::OnCircle => "on_circle",
            Placement::Outside => "outside",
        }
        .to_string(),
        margin: p.margin,
    }
}

fn step_down(a: &ChannelAnalysis) -> StepDownEntry {
    StepDownEntry {
        zero_reflection: a.zero_steps.reflection.clone(),
        zero_stopped_at: a.zero_steps.stopped_at,
        pole_reflection: a.pole_steps.reflection.clone(),
        pole_stopped_at: a.pole_steps.stopped_at,
        agrees_with_roots: a.disagreements.is_empty(),
        disagreements: a.disagreements.clone(),
    }
}

fn verdict(analysis: &Result<ChannelAnalysis, AnalysisError>, sample_rate: f64) -> VerdictEntry {
    let a = match analysis {
        Ok(a) => a,
        Err(e) => {
            return VerdictEntry {
                invertible: false,
                summary: format!("not analysed — {e}"),
                blocking_zeros: Vec::new(),
            }
        }
    };
    let (on_circle, outside): (&[PlacedRoot], &[PlacedRoot]) = match &a.verdict {
        Verdict::Invertible => (&[], &[]),
        Verdict::NotInvertible { on_circle, outside } => (on_circle, outside),
    };
    let blocking_zeros: Vec<BlockingZero> = outside
        .iter()
        .chain(on_circle)
        .map(|p| BlockingZero {
            root: root(p, sample_rate),
            beyond: -p.margin,
        })
        .collect();
    if !a.channel_stable {
        let bad: Vec<&PlacedRoot> = a
            .poles
            .iter()
            .filter(|p| p.placement != Placement::Inside)
            .collect();
        let mut count: usize = bad.iter().map(|p| p.root.multiplicity).sum();
        let largest = bad.iter().map(|p| p.root.radius()).fold(0.0, f64::max);
        if !a.pole_count.listed {
            count = a.pole_count.on_circle + a.pole_count.outside;
        }
        return VerdictEntry {
            invertible: false,
            summary: format!(
                "the channel itself is unstable — {count} pole{} on or outside the unit circle \
                 (largest |z| = {}); a physical link is stable, so re-check the model",
                plural(count),
                significant(largest)
            ),
            blocking_zeros,
        };
    }
    if !a.zero_count.listed {
        return unlisted_verdict(a, blocking_zeros);
    }
    if blocking_zeros.is_empty() {
        return VerdictEntry {
            invertible: true,
            summary: "a stable causal inverse exists".to_string(),
            blocking_zeros,
        };
    }
    let mut parts = Vec::new();
    if !outside.is_empty() {
        let count: usize = outside.iter().map(|p| p.root.multiplicity).sum();
        // Largest first, and each distinct radius once (echo paths put many zeros on one).
        let mut sorted: Vec<&PlacedRoot> = outside.iter().collect();
        sorted.sort_by(|a, b| b.root.radius().total_cmp(&a.root.radius()));
        let mut quoted: Vec<String> = sorted
            .iter()
            .map(|p| {
                format!(
                    "|z| = {}, {} beyond",
                    significant(p.root.radius()),
                    significant(-p.margin)
                )
            })
            .collect();
        quoted.dedup();
        let distinct = quoted.len();
        quoted.truncate(RADII_QUOTED);
        parts.push(format!(
            "{count} zero{} outside the unit circle ({}{})",
            plural(count),
            quoted.join("; "),
            more(distinct)
        ));
    }
    if !on_circle.is_empty() {
        let count: usize = on_circle.iter().map(|p| p.root.multiplicity).sum();
        // A conjugate pair is one tone to a listener: each frequency once, as a positive figure.
        let mut tones: Vec<f64> = on_circle
            .iter()
            .map(|p| (p.root.angle() * sample_rate / TAU).abs())
            .collect();
        tones.sort_by(f64::total_cmp);
        tones.dedup_by(|a, b| (*a - *b).abs() <= 1e-9 * b.abs().max(1.0));
        let quoted: Vec<String> = tones
            .iter()
            .take(RADII_QUOTED)
            .map(|hz| format!("{} Hz", significant(*hz)))
            .collect();
        parts.push(format!(
            "{count} zero{} on the unit circle (at {}{}), where the channel passes nothing",
            plural(count),
            quoted.join(", "),
            more(tones.len())
        ));
    }
    VerdictEntry {
        invertible: false,
        summary: format!("no stable causal inverse — {}", parts.join(" and ")),
        blocking_zeros,
    }
}

/// The verdict for a channel whose zeros were counted, not listed.
fn unlisted_verdict(a: &ChannelAnalysis, blocking_zeros: Vec<BlockingZero>) -> VerdictEntry {
    let c = &a.zero_count;
    if a.verdict.is_invertible() {
        return VerdictEntry {
            invertible: true,
            summary: format!(
                "a stable causal inverse exists (all {} zeros counted strictly inside the unit \
                 circle; not listed at this order)",
                c.degree()
            ),
            blocking_zeros,
        };
    }
    let mut parts = Vec::new();
    if c.outside > 0 {
        parts.push(format!(
            "{} zero{} outside the unit circle",
            c.outside,
            plural(c.outside)
        ));
    }
    if c.on_circle > 0 {
        parts.push(format!(
            "{} zero{} on the unit circle (within the tolerance or round-off)",
            c.on_circle,
            plural(c.on_circle)
        ));
    }
    if parts.is_empty() {
        parts.push("the step-down test and the count disagree near the circle".to_string());
    }
    VerdictEntry {
        invertible: false,
        summary: format!(
            "no stable causal inverse — {} (of {}, counted by the argument principle, not listed)",
            parts.join(" and "),
            c.degree()
        ),
        blocking_zeros,
    }
}

fn inverse(d: &InverseDesign, sample_rate: f64) -> InverseEntry {
    let ms = |samples: usize| samples as f64 * 1_000.0 / sample_rate;
    InverseEntry {
        method: method_key(d.method).to_string(),
        method_name: d.method.name().to_string(),
        gives_up: d.gives_up(),
        coefficients: coefficients(&d.inverse),
        difference_equation: difference_equation(&d.inverse.b, &d.inverse.a),
        gain: d.gain,
        residual_delay_samples: d.residual_delay_samples,
        residual_delay_ms: ms(d.residual_delay_samples),
        added_latency_samples: d.added_latency_samples,
        added_latency_ms: ms(d.added_latency_samples),
        total_delay_samples: d.residual_delay_samples + d.added_latency_samples,
        total_delay_ms: ms(d.residual_delay_samples + d.added_latency_samples),
        peak_boost_db: d.peak_boost_db,
        peak_boost_hz: d.peak_boost_hz,
        decay_60db_ms: d.decay_60db_seconds * 1_000.0,
        unity_scale_db: d.unity_scale_db,
        reflected_zeros: roots(&d.reflected_zeros, sample_rate),
        all_pass: d.all_pass.as_ref().map(|ap| AllPassEntry {
            group_delay_min_ms: ap.group_delay_min_ms,
            group_delay_max_ms: ap.group_delay_max_ms,
        }),
        boost_cap: d.boost_cap.as_ref().map(|cap| BoostCapEntry {
            cap_db: cap.cap_db,
            radius_limit: cap.radius_limit,
            moved_zeros: cap
                .moved_zeros
                .iter()
                .map(|m| MovedZeroEntry {
                    from_re: m.from.re,
                    from_im: m.from.im,
                    to_re: m.to.re,
                    to_im: m.to.im,
                })
                .collect(),
            level_reduction_db: cap.level_reduction_db,
            peak_before_db: cap.peak_before_db,
        }),
        cepstral: d.cepstral.as_ref().map(|c| CepstralEntry {
            fft_size: c.fft_size,
            deviation_db: c.deviation_db,
            reflected_count: c.reflected_count,
            contraction: c.contraction,
        }),
        correction_band: d.band.as_ref().map(correction_band_entry),
        fir: d.fir.as_ref().map(|fir| FirEntry {
            taps: fir.taps,
            delay_samples: fir.delay_samples,
            delay_ms: fir.delay_ms,
            delay_searched: fir.delay_searched,
            regularization: fir.regularization,
            level_reduction_db: fir.level_reduction_db,
            residual_error_db: fir.residual_error_db,
        }),
        knee: d.knee.as_ref().map(knee_entry),
    }
}

fn correction_band_entry(b: &crate::design::BandOutcome) -> CorrectionBandEntry {
    let f = &b.figures;
    CorrectionBandEntry {
        low_hz: b.band.low_hz,
        high_hz: b.band.high_hz,
        source: match b.band.source {
            crate::design::BandSource::Configured => "configured",
            crate::design::BandSource::Default => "default",
        }
        .to_string(),
        limited: b.limited,
        noise_aware: b.noise_aware,
        lowest_snr_db: b.lowest_snr_db,
        largest_boost_inside_db: f.inside.db,
        largest_boost_inside_hz: f.inside.hz,
        largest_boost_outside_db: f.outside.map(|o| o.db),
        largest_boost_outside_hz: f.outside.map(|o| o.hz),
        outside_before_db: b.outside_before.map(|o| o.db),
        outside_before_hz: b.outside_before.map(|o| o.hz),
        noise_gain_db: f.noise_gain_db,
        noise_mostly_from_hz: f.noise_mostly_from_hz,
        noise_share: f.noise_share,
        noise_share_in_band: f.noise_share_in_band,
        fit_error_db: b.fit_error_db,
    }
}

fn plural(n: usize) -> &'static str {
    if n == 1 {
        ""
    } else {
        "s"
    }
}

fn more(listed: usize) -> String {
    if listed > RADII_QUOTED {
        format!("; {} more radii", listed - RADII_QUOTED)
    } else {
        String::new()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::analyse;
    use crate::design::design_exact;
    use crate::model::InversePolicy;

    fn path(b: Vec<f64>, a: Vec<f64>) -> Path {
        Path {
            label: "hop across the quarry".to_string(),
            channels: vec![0],
            form: ModelForm::DifferenceEquation,
            channel: TransferFunction::new(b, a),
            structure: Structure::DirectForm2T,
            precision: CoefficientPrecision::F64,
            circle_tolerance: 1e-9,
            inverse: InversePolicy::default(),
        }
    }

    fn report(p: &Path) -> PathReport {
        let analysis = analyse(&p.channel, p.circle_tolerance);
        let design = analysis
            .as_ref()
            .ok()
            .map(|a| design_exact(&p.channel, a, 48_000.0));
        path_report(p, 48_000.0, &analysis, design.as_ref(), None, None)
    }

    #[test]
    fn zero_outside_is_named_with_its_distance() {
        // 1 + 1.25 z⁻¹ has its zero at z = −1.25 (common practice): 0.25 beyond the circle,
        // at the Nyquist angle π, i.e. 24 kHz at 48 kHz.
        let r = report(&path(vec![1.0, 1.25], vec![1.0]));
        assert!(!r.verdict.invertible);
        assert_eq!(
            r.verdict.summary,
            "no stable causal inverse — 1 zero outside the unit circle (|z| = 1.25, 0.25 beyond)"
        );
        assert_eq!(r.verdict.blocking_zeros.len(), 1);
        let zero = &r.verdict.blocking_zeros[0];
        assert!((zero.beyond - 0.25).abs() < 1e-12);
        assert!((zero.root.angle_hz.abs() - 24_000.0).abs() < 1e-6);
        assert_eq!(zero.root.placement, "outside");
        assert!(r.inverse.is_none());
        assert!(r.design_error.is_some());
    }

    #[test]
    fn invertible_channel_reports_its_inverse() {
        // H = z⁻³(1 + 0.5 z⁻¹): bulk delay 3; G = 1/(1 + 0.5 z⁻¹), i.e. y[n] = x[n] − 0.5 y[n−1]
        // (common practice).
        let r = report(&path(vec![0.0, 0.0, 0.0, 1.0, 0.5], vec![1.0]));
        assert!(r.verdict.invertible);
        assert_eq!(r.verdict.summary, "a stable causal inverse exists");
        assert_eq!(r.bulk_delay_samples, 3);
        assert!((r.bulk_delay_ms - 0.0625).abs() < 1e-12);
        let inverse = r.inverse.unwrap();
        assert_eq!(inverse.difference_equation, "y[n] = x[n] - 0.5 y[n-1]");
        assert_eq!(inverse.residual_delay_samples, 3);
        // Peak of 1/|1 + 0.5 e^{−jω}| is 1/0.5 = 2 (6.02 dB) at ω = π.
        assert!((inverse.peak_boost_db - 20.0 * 2f64.log10()).abs() < 1e-6);
        assert!((inverse.peak_boost_hz - 24_000.0).abs() < 1.0);
    }

    #[test]
    fn zero_on_the_circle_is_placed_by_frequency() {
        // 1 + z⁻¹ passes nothing at Nyquist: its zero is at z = −1 (common practice).
        let r = report(&path(vec![1.0, 1.0], vec![1.0]));
        assert_eq!(
            r.verdict.summary,
            "no stable causal inverse — 1 zero on the unit circle (at 24000 Hz), where the \
             channel passes nothing"
        );
    }

    #[test]
    fn unstable_channel_is_called_so() {
        let r = report(&path(vec![1.0], vec![1.0, -1.5]));
        assert_eq!(r.channel_stable, Some(false));
        assert!(r
            .verdict
            .summary
            .starts_with("the channel itself is unstable — 1 pole on or outside"));
    }
}
