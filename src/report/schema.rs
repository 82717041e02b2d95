//! The report's data: one structure both the text and the JSON renderings are made from.
//!
//! The JSON rendering is exactly these structures serialised, so their field names ARE the JSON
//! schema. It is versioned by [`SCHEMA_VERSION`]: fields may be added within a version, never
//! renamed, removed or given another meaning. Non-finite numbers (which JSON cannot carry) are
//! written as `null`. Angles are in radians in (−π, π] and in Hz at the link's sample rate
//! (angle · fs / 2π, negative for the lower member of a conjugate pair).

use serde::Serialize;

/// Bumped when a field is renamed, removed or changes meaning. Version 2: `form` takes the
/// config's own key (`roots`, `echoes` where version 1 said `zeros_poles`, `echo_paths`), the
/// direct form's coefficients are keyed `direct_form_2t` like the structure (version 1:
/// `direct_form2_t`); added `form_name`, the inverse's `total_delay_samples`/`_ms` and the
/// switch's `requested_by`. Version 3: an inverse's `method` may be chosen by the latency-knee
/// method (its `knee` says how); added the path's `trade_off` table and `trade_off_error`.
///
/// Version 4: the inverse's `correction_band` (the band it corrects, its largest boost inside
/// and outside, its white-noise gain and what the band and the measured noise changed).
pub const SCHEMA_VERSION: u32 = 4;

/// The whole link.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LinkReport {
    /// Always "redress-link-report".
    pub schema: &'static str,
    pub schema_version: u32,
    /// The config file the link came from, when it came from one.
    pub source: Option<String>,
    pub sample_rate_hz: f64,
    pub channel_count: usize,
    /// True when every path has a stable, realized inverse that the engine can run.
    pub runnable: bool,
    /// One plain sentence per reason the link cannot run (empty when runnable).
    pub problems: Vec<String>,
    pub paths: Vec<PathReport>,
}

/// One path: a channel model and what became of its inverse.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PathReport {
    pub label: String,
    /// Zero-based audio channel indices.
    pub channels: Vec<usize>,
    /// How the config described the channel, by the config's key: "difference_equation",
    /// "roots", "echoes" or "sections".
    pub form: String,
    /// The same in plain words, e.g. "zeros and poles".
    pub form_name: String,
    /// The channel H(z) = B(z)/A(z) as coefficients of z⁻¹.
    pub channel: Coefficients,
    /// Leading zero taps of B: delay the inverse cannot undo.
    pub bulk_delay_samples: usize,
    pub bulk_delay_ms: f64,
    /// Why the analysis failed, when it did (then zeros and poles are empty).
    pub analysis_error: Option<String>,
    /// Roots of B after the bulk delay is stripped.
    pub zeros: Vec<RootEntry>,
    /// Roots of A.
    pub poles: Vec<RootEntry>,
    /// How many zeros lie inside, on and outside the circle; for a long channel the zeros are
    /// counted this way and not listed (null when not analysed).
    pub zero_count: Option<CountEntry>,
    /// The same for the poles.
    pub pole_count: Option<CountEntry>,
    /// Every pole strictly inside the unit circle (null when not analysed).
    pub channel_stable: Option<bool>,
    pub step_down: Option<StepDownEntry>,
    pub verdict: VerdictEntry,
    /// The inverse, when one was designed.
    pub inverse: Option<InverseEntry>,
    /// Why no inverse was designed, when a design was attempted and failed.
    pub design_error: Option<String>,
    /// The running structure, when the inverse was realized.
    pub realization: Option<RealizationEntry>,
    /// Why the inverse could not be realized, when that failed.
    pub realize_error: Option<String>,
    /// True when this path has a realized inverse ready to run.
    pub runnable: bool,
    /// What latency buys, for a path with no exact inverse within the cap (null otherwise).
    pub trade_off: Option<TradeOffEntry>,
    /// Why the table could not be made, when that failed.
    pub trade_off_error: Option<String>,
}

/// The latency–error table: the minimum-phase substitute and the least-squares FIR at each
/// added latency, each judged on the cascade channel∘inverse.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TradeOffEntry {
    /// The range the band levels are judged in (Hz) and the bands' designator (3: thirds).
    pub band_low_hz: f64,
    pub band_high_hz: f64,
    pub band_fraction: u32,
    pub largest_latency_ms: f64,
    /// How the FIR's taps were chosen, in words.
    pub taps_rule: String,
    pub boost_cap_db: f64,
    /// The minimum-phase substitute first, then the FIR at rising latency.
    pub rows: Vec<TradeOffRowEntry>,
    /// The inverse the config asked for, judged the same way.
    pub configured: Option<TradeOffRowEntry>,
}

/// One candidate inverse of the table.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TradeOffRowEntry {
    /// "exact", "minimum_phase" or "least_squares_fir".
    pub method: String,
    pub method_name: String,
    /// Latency the inverse adds beyond the link's bulk delay.
    pub latency_samples: usize,
    pub latency_ms: f64,
    /// ‖h∗g − δ(n − D)‖² in dB, D the bulk delay plus the added latency.
    pub residual_error_db: f64,
    /// The one-third-octave band level of the cascade furthest from 0 dB (signed, dB), and that
    /// band's nominal frequency (null when no band lies in the judged range).
    pub worst_band_deviation_db: Option<f64>,
    pub worst_band_hz: Option<f64>,
    /// Energy of the cascade before its largest sample, dB against the whole (null: none).
    pub pre_ringing_db: f64,
    pub peak_boost_db: f64,
    /// Taps of an FIR, order of a recursive inverse (the other is null).
    pub taps: Option<usize>,
    pub order: Option<usize>,
    pub regularization: Option<f64>,
    pub level_reduction_db: f64,
}

/// What the latency-knee method chose and why.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct KneeEntry {
    pub budget_ms: f64,
    pub margin_db: f64,
    pub pre_ringing_limit_db: f64,
    /// The row used (null for an exact inverse: nothing was traded).
    pub picked: Option<TradeOffRowEntry>,
    /// The best residual in the budget, when it is not the pick.
    pub best: Option<TradeOffRowEntry>,
    /// What the same rule picks with the pick left out.
    pub runner_up: Option<TradeOffRowEntry>,
    pub why: String,
}

/// Polynomial coefficients of z⁻¹: b for the numerator, a for the denominator.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Coefficients {
    pub b: Vec<f64>,
    pub a: Vec<f64>,
}

/// Roots of one polynomial against the unit circle, counted.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CountEntry {
    pub inside: usize,
    pub on_circle: usize,
    pub outside: usize,
    /// True when the roots were computed and are listed; false above the order where they are
    /// only counted.
    pub listed: bool,
    /// How the count was reached, in plain words.
    pub how: String,
}

/// A zero or a pole.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RootEntry {
    pub re: f64,
    pub im: f64,
    /// |z|.
    pub radius: f64,
    pub angle_rad: f64,
    pub angle_hz: f64,
    pub multiplicity: usize,
    /// "inside", "on_circle" or "outside" the unit circle (within the circle tolerance).
    pub placement: String,
    /// 1 − |z|: positive inside, negative outside.
    pub margin: f64,
}

/// The independent step-down (Schur–Cohn) test and whether it agrees with the roots.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StepDownEntry {
    /// Reflection coefficients k₁… of B (bulk delay stripped).
    pub zero_reflection: Vec<f64>,
    /// Stage at which |k| ≥ 1 stopped the recursion on B (null: every |k| < 1).
    pub zero_stopped_at: Option<usize>,
    /// Reflection coefficients k₁… of A.
    pub pole_reflection: Vec<f64>,
    pub pole_stopped_at: Option<usize>,
    /// True when the step-down test and the roots tell the same story.
    pub agrees_with_roots: bool,
    /// Where they do not, in plain words.
    pub disagreements: Vec<String>,
}

/// Does a stable, causal inverse exist?
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct VerdictEntry {
    /// True when every zero is strictly inside the unit circle and the channel is stable.
    pub invertible: bool,
    /// The verdict in one plain sentence (the text report's verdict line, without "verdict: ").
    pub summary: String,
    /// The zeros on or outside the unit circle that prevent an exact inverse.
    pub blocking_zeros: Vec<BlockingZero>,
}

/// A zero that prevents inversion and by how much.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BlockingZero {
    #[serde(flatten)]
    pub root: RootEntry,
    /// |z| − 1: how far beyond the unit circle (≈ 0 for a zero on it).
    pub beyond: f64,
}

/// The designed inverse G(z).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct InverseEntry {
    /// How it was obtained: "exact", "minimum_phase" or "least_squares_fir".
    pub method: String,
    /// The same in plain words, e.g. "minimum-phase substitute".
    pub method_name: String,
    /// What this design leaves uncorrected, in one plain sentence.
    pub gives_up: String,
    /// G(z) with a₀ = 1.
    pub coefficients: Coefficients,
    /// The recursion that runs it, "y[n] = … x[n] … − … y[n−1] …".
    pub difference_equation: String,
    /// Leading coefficient of G's numerator.
    pub gain: f64,
    /// Delay left in channel∘inverse (the bulk delay).
    pub residual_delay_samples: usize,
    pub residual_delay_ms: f64,
    /// Delay the inverse adds on purpose (the FIR inverse's D; 0 otherwise).
    pub added_latency_samples: usize,
    pub added_latency_ms: f64,
    /// Delay of the equalized output against the original: residual (bulk) delay plus added
    /// latency. The figure to give `redress compare --delay`.
    pub total_delay_samples: usize,
    pub total_delay_ms: f64,
    /// Largest gain of the inverse over frequency and where.
    pub peak_boost_db: f64,
    pub peak_boost_hz: f64,
    /// Time for the inverse's impulse response to fall by 60 dB.
    pub decay_60db_ms: f64,
    /// Gain applied to hold the cascade at 0 dB at the configured frequency (0 when none).
    pub unity_scale_db: f64,
    /// Zeros outside the circle that were reflected to 1/conj(z) (as they were).
    pub reflected_zeros: Vec<RootEntry>,
    /// The uncorrected all-pass left by reflection, when zeros were reflected.
    pub all_pass: Option<AllPassEntry>,
    /// What the boost cap changed, when it acted.
    pub boost_cap: Option<BoostCapEntry>,
    /// Details of a least-squares FIR inverse.
    pub fir: Option<FirEntry>,
    /// How the minimum-phase substitute was built without roots, when it was (long channels).
    pub cepstral: Option<CepstralEntry>,
    /// The band the inverse corrects and what it does inside and outside it.
    pub correction_band: Option<CorrectionBandEntry>,
    /// What the latency-knee method chose and why, when it was the method.
    pub knee: Option<KneeEntry>,
}

/// The correction band and the inverse's figures against it (all gains in dB).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CorrectionBandEntry {
    pub low_hz: f64,
    pub high_hz: f64,
    /// "configured" (`correction_band_hz`) or "default".
    pub source: String,
    /// True when the design was redone to roll to unity outside the band (or to respect the
    /// measured noise); false when it kept to the band as designed.
    pub limited: bool,
    /// True when a measured SNR per band (`band_snr_db`) shaped the inverse.
    pub noise_aware: bool,
    /// Lowest measured SNR given for a band inside the correction band (null: none given).
    pub lowest_snr_db: Option<f64>,
    pub largest_boost_inside_db: f64,
    pub largest_boost_inside_hz: f64,
    /// Largest gain outside the band's edges (null when the band is the whole axis).
    pub largest_boost_outside_db: Option<f64>,
    pub largest_boost_outside_hz: Option<f64>,
    /// The same before the design was limited.
    pub outside_before_db: Option<f64>,
    pub outside_before_hz: Option<f64>,
    /// White-noise gain of the inverse, 10·log10(Σ g²).
    pub noise_gain_db: f64,
    /// Nominal centre (Hz) of the octave band that holds the largest share of that noise power,
    /// and the share (0 … 1).
    pub noise_mostly_from_hz: f64,
    pub noise_share: f64,
    /// Share of the noise power inside the band's edges (0 … 1).
    pub noise_share_in_band: f64,
    /// Largest deviation of a band-limited recursive design's FIR from its target magnitude.
    pub fit_error_db: f64,
}

/// The homomorphic route's figures.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CepstralEntry {
    /// FFT size the cepstrum converged at (points over the whole circle).
    pub fft_size: usize,
    /// Largest |20·log10(|B_min| / |B|)| before the cap moved zeros, notch bottoms aside (dB).
    pub deviation_db: f64,
    /// Zeros reflected from outside the circle (counted, not listed).
    pub reflected_count: usize,
    /// Common factor every zero was pulled in by after truncation (1: none).
    pub contraction: f64,
}

/// The phase error a minimum-phase substitute leaves: an all-pass, described by its group delay.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AllPassEntry {
    pub group_delay_min_ms: f64,
    pub group_delay_max_ms: f64,
}

/// What the boost cap did.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BoostCapEntry {
    pub cap_db: f64,
    /// Radius the outermost zeros were pulled in to (null when none moved).
    pub radius_limit: Option<f64>,
    pub moved_zeros: Vec<MovedZeroEntry>,
    /// Broadband level reduction when moving zeros was not enough (dB ≥ 0).
    pub level_reduction_db: f64,
    /// Peak the inverse would have had without the cap (null: unbounded, a zero on the circle).
    pub peak_before_db: f64,
}

/// A zero the boost cap moved.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MovedZeroEntry {
    pub from_re: f64,
    pub from_im: f64,
    pub to_re: f64,
    pub to_im: f64,
}

/// The least-squares FIR inverse's figures.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FirEntry {
    pub taps: usize,
    pub delay_samples: usize,
    pub delay_ms: f64,
    pub delay_searched: bool,
    pub regularization: f64,
    pub level_reduction_db: f64,
    /// ‖h∗g − δ(n−D)‖² in dB.
    pub residual_error_db: f64,
}

/// The structure the inverse runs in.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RealizationEntry {
    /// "direct_form_2t", "sections" or "lattice_ladder" (the config's spellings).
    pub structure: String,
    /// Plain name, e.g. "direct form II transposed".
    pub structure_name: String,
    /// "f32" or "f64": what the coefficients were rounded to.
    pub precision: String,
    /// The structure's own coefficients, as the realization stage lays them out.
    pub coefficients: serde_json::Value,
    /// Largest pole radius of the realized filter, after rounding.
    pub max_pole_radius: f64,
    /// Why the requested structure was not used, when the realization switched to a sturdier
    /// or cheaper one (null when it runs as requested).
    pub switched_from: Option<StructureSwitchEntry>,
    /// Structures tried and refused before this one, in the order tried.
    pub refused_first: Vec<StructureRefusalEntry>,
    /// How the running poles were judged: "roots" (root finder and step-down test),
    /// "dominant_leading_tap" (max_pole_radius is then an upper bound) or "no_poles".
    pub pole_check: String,
    /// For a sparse recursion: what it touches.
    pub sparse: Option<SparseEntry>,
    /// For a partitioned convolution: how the taps are cut.
    pub partitioned: Option<PartitionedEntry>,
}

/// A structure tried and refused.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StructureRefusalEntry {
    /// The config's spelling of the structure.
    pub structure: String,
    pub reason: String,
}

/// A sparse recursion's size.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SparseEntry {
    /// Non-zero coefficients run a sample (numerator taps plus recursive taps).
    pub taps_touched: usize,
    /// Order of the difference equation (its longest delay).
    pub order: usize,
    /// Coefficients the dense direct form would touch a sample (2·order + 1).
    pub dense_taps: usize,
    /// The recursion as it runs, coefficients after rounding.
    pub runs_as: String,
    /// Σ|aₖ| of the recursive taps, when below 1 (the cheap pole check held).
    pub recursive_tap_sum: Option<f64>,
}

/// A partitioned convolution's layout.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PartitionedEntry {
    pub taps: usize,
    /// Taps run as a direct-form head (no latency added).
    pub head_taps: usize,
    /// Partition size B; the FFTs have 2·B points.
    pub partition_size: usize,
    pub fft_size: usize,
    /// Partitions after the head, run by FFT.
    pub fft_partitions: usize,
}

/// A switch away from the requested structure.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StructureSwitchEntry {
    /// The structure that was to be used ("direct_form_2t", "sections", "lattice_ladder").
    pub requested: String,
    /// The same in plain words.
    pub requested_name: String,
    /// "config" when the config named it, "default" when it was the default for the order.
    pub requested_by: String,
    /// Why it was not used (the problem only; the switch is what a help line would advise).
    pub reason: String,
}
