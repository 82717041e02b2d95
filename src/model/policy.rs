use serde::Serialize;

/// How to build the inverse of a path, and the safety limits it must respect.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct InversePolicy {
    pub method: InverseMethod,
    /// Largest gain the inverse may have at any frequency, in dB (> 0).
    pub boost_cap_db: f64,
    /// When set, the overall cascade channel∘inverse is scaled to 0 dB at this frequency (Hz).
    pub unity_at_hz: Option<f64>,
    /// Settings of the least-squares FIR inverse (used only by that method).
    pub fir: FirSettings,
    /// Most latency the latency-knee method may add (seconds; used only by that method).
    pub knee_budget_seconds: f64,
    /// May realization switch to a safer structure when the requested one would be unstable or
    /// too close to the circle after coefficient rounding?
    pub structure_fallback: bool,
    /// True when the config named the path's structure; false when the structure is the
    /// default for the channel's order, which the pipeline may replace without comment (an FIR
    /// inverse then simply runs as a direct form) and which reports call "the default".
    pub structure_configured: bool,
    /// The band to correct, as the config gave it (`correction_band_hz`); `None` takes the
    /// default band (`design::correction_band` says which and why).
    pub correction_band_hz: Option<BandEdges>,
    /// Measured SNR per fractional-octave band (`band_snr_db`, written by `identify`): the
    /// inverse gives no more gain where the measurement is no better than its noise. Empty when
    /// the config has none.
    pub band_snr: Vec<BandSnr>,
}

/// Edges of a frequency band, in Hz (0 ≤ low < high ≤ half the sample rate).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct BandEdges {
    pub low_hz: f64,
    pub high_hz: f64,
}

/// The SNR measured in one band, centred at `hz`.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct BandSnr {
    pub hz: f64,
    pub snr_db: f64,
}

/// Which inverse to build.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum InverseMethod {
    /// 1/H exactly, or nothing: refused when a zero is on or outside the circle, or when the
    /// exact inverse would boost more than the cap.
    Exact,
    /// The default: exact where possible; zeros outside the circle are reflected inside
    /// (magnitude corrected, phase left as an all-pass), and zeros on or near the circle are
    /// pulled in just enough to respect the boost cap. No added latency.
    MinimumPhase,
    /// A delayed least-squares FIR inverse: corrects magnitude and phase, costs latency.
    LeastSquaresFir,
    /// The exact inverse when one exists within the cap; otherwise the knee of the
    /// latency–error table within a latency budget: the least latency whose residual error is
    /// within a margin of the best in the budget (see `design::knee`).
    LatencyKnee,
}

/// Length, delay and regularisation of a least-squares FIR inverse.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FirSettings {
    /// Number of taps L.
    pub taps: usize,
    /// How the delay D is chosen.
    pub delay: FirDelay,
    /// Tikhonov weight λ ≥ 0, relative to the channel's energy: minimises ‖h∗g − δ(n−D)‖² + λ·‖h‖²·‖g‖².
    pub regularization: f64,
}

/// The delay of a least-squares FIR inverse.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum FirDelay {
    /// Exactly this many samples.
    Fixed { samples: usize },
    /// The delay with the smallest residual error, searched from 0 up to this budget (seconds).
    Search { budget_seconds: f64 },
}

/// Default boost cap: 20 dB. A tenfold amplitude boost is already a lot to ask of an amplifier
/// and of a listener's ears; raise it knowingly.
pub const DEFAULT_BOOST_CAP_DB: f64 = 20.0;

/// Default FIR inverse length.
pub const DEFAULT_FIR_TAPS: usize = 256;

/// Most taps a least-squares FIR inverse may have.
pub const MAX_FIR_TAPS: usize = 4096;

/// Default latency budget of the latency-knee method: 10 ms, as the FIR delay search.
pub const DEFAULT_KNEE_BUDGET_SECONDS: f64 = 0.010;

/// Largest latency budget of the latency-knee method (ms): the top of the latency ladder the
/// trade-off table tries.
pub const MAX_KNEE_BUDGET_MS: f64 = 20.0;

/// Default latency budget for the FIR delay search: 10 ms.
pub const DEFAULT_FIR_BUDGET_SECONDS: f64 = 0.010;

impl Default for FirSettings {
    fn default() -> Self {
        Self {
            taps: DEFAULT_FIR_TAPS,
            delay: FirDelay::Search {
                budget_seconds: DEFAULT_FIR_BUDGET_SECONDS,
            },
            regularization: 0.0,
        }
    }
}

impl Default for InversePolicy {
    fn default() -> Self {
        Self {
            method: InverseMethod::MinimumPhase,
            boost_cap_db: DEFAULT_BOOST_CAP_DB,
            unity_at_hz: None,
            fir: FirSettings::default(),
            knee_budget_seconds: DEFAULT_KNEE_BUDGET_SECONDS,
            structure_fallback: true,
            structure_configured: false,
            correction_band_hz: None,
            band_snr: Vec::new(),
        }
    }
}
