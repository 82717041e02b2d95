//! Generated programme material for demos and tests, so no audio file has to be committed.
//!
//! A mix meant to exercise an equalizer the way real programme does: a few steady tones whose
//! level drifts slowly (tonal content across the band), band-limited noise bursts (broadband
//! energy switching on and off) and clicks (sharp transients that show up ringing and smearing).
//! The same spec and seed always give the same samples, on every machine and crate version: the
//! random numbers come from a small generator defined here rather than from a crate that does not
//! promise a stable sequence across releases.

use std::f64::consts::TAU;

/// What to generate.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ProgrammeSpec {
    pub sample_rate: f64,
    pub channels: usize,
    pub frames: usize,
    /// Different seeds give different noise, phases and burst timing.
    pub seed: u64,
    /// Largest absolute sample value of the result (e.g. 0.25 for −12 dBFS).
    pub peak: f32,
}

impl ProgrammeSpec {
    /// `seconds` of material at `sample_rate`, peaking at −12 dBFS, leaving headroom for a link
    /// or an inverse that boosts some frequencies.
    pub fn new(sample_rate: f64, channels: usize, seconds: f64, seed: u64) -> Self {
        Self {
            sample_rate,
            channels,
            frames: (seconds * sample_rate).round().max(0.0) as usize,
            seed,
            peak: 0.25,
        }
    }
}

/// Interleaved samples, `spec.frames * spec.channels` of them.
pub fn generate(spec: &ProgrammeSpec) -> Vec<f32> {
    let channels = spec.channels;
    let mut mix = vec![0.0f64; spec.frames * channels];
    for channel in 0..channels {
        let mut random = SplitMix64::new(spec.seed ^ (channel as u64).wrapping_mul(0x9E37_79B9));
        let mono = channel_material(spec.sample_rate, spec.frames, &mut random);
        for (frame, value) in mono.into_iter().enumerate() {
            mix[frame * channels + channel] = value;
        }
    }
    let loudest = mix.iter().fold(0.0f64, |m, x| m.max(x.abs()));
    let scale = if loudest > 0.0 {
        f64::from(spec.peak) / loudest
    } else {
        0.0
    };
    mix.into_iter().map(|x| (x * scale) as f32).collect()
}

fn channel_material(rate: f64, frames: usize, random: &mut SplitMix64) -> Vec<f64> {
    let nyquist = rate / 2.0;
    let mut out = vec![0.0f64; frames];

    // Tones: low, mid and high, each with its own slow level drift.
    for (i, &hz) in [196.0, 1_234.5, 4_321.0].iter().enumerate() {
        let hz: f64 = if hz < 0.45 * nyquist {
            hz
        } else {
            0.3 * nyquist / (i + 1) as f64
        };
        let phase = random.unit() * TAU;
        let drift_hz = 0.17 + 0.11 * i as f64;
        let drift_phase = random.unit() * TAU;
        for (n, y) in out.iter_mut().enumerate() {
            let t = n as f64 / rate;
            let level = 0.6 + 0.4 * (TAU * drift_hz * t + drift_phase).sin();
            *y += 0.3 * level * (TAU * hz * t + phase).sin();
        }
    }

    // Noise bursts: white noise through a two-pole band-pass around ~2 kHz (or a quarter of the
    // Nyquist rate at low rates), under a Hann window 120 ms long, one every ~0.6 s.
    let centre = (2_000.0f64).min(nyquist / 4.0);
    let theta = TAU * centre / rate;
    let r = 0.97;
    let (a1, a2) = (-2.0 * r * theta.cos(), r * r);
    let (mut y1, mut y2, mut x2, mut x1) = (0.0, 0.0, 0.0, 0.0);
    let burst = (0.12 * rate) as usize;
    let spacing = (0.61 * rate) as usize;
    let offset = (random.unit() * 0.3 * rate) as usize;
    for (n, y) in out.iter_mut().enumerate() {
        let x = random.signed();
        // Zeros at DC and Nyquist, poles at radius r: a band-pass with unit-order peak gain.
        let band = (1.0 - r) * (x - x2) - a1 * y1 - a2 * y2;
        (x2, x1) = (x1, x);
        (y2, y1) = (y1, band);
        if n >= offset && burst > 1 {
            let within = (n - offset) % spacing.max(1);
            if within < burst {
                let window = 0.5 - 0.5 * (TAU * within as f64 / (burst - 1) as f64).cos();
                *y += 0.5 * window * band;
            }
        }
    }

    // Clicks: a sharp onset decaying over about 2 ms, alternating in sign, one every ~0.43 s.
    let click_spacing = ((0.43 * rate) as usize).max(1);
    let decay = (-1.0 / (0.0005 * rate)).exp();
    let click_offset = (random.unit() * 0.2 * rate) as usize;
    let mut sign = 1.0;
    let mut level = 0.0;
    for (n, y) in out.iter_mut().enumerate() {
        if n >= click_offset && (n - click_offset).is_multiple_of(click_spacing) {
            level = sign * 0.8;
            sign = -sign;
        }
        *y += level;
        level *= decay;
    }
    out
}

/// SplitMix64: a tiny, well-known generator whose sequence is fixed by its definition (also the
/// live layer's dither source: no allocation, a few integer operations per number).
#[derive(Debug, Clone)]
pub(crate) struct SplitMix64 {
    state: u64,
}

impl SplitMix64 {
    pub(crate) fn new(seed: u64) -> Self {
        Self { state: seed }
    }

    #[inline]
    pub(crate) fn next(&mut self) -> u64 {
        self.state = self.state.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.state;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    /// Uniform in [0, 1).
    #[inline]
    pub(crate) fn unit(&mut self) -> f64 {
        (self.next() >> 11) as f64 / (1u64 << 53) as f64
    }

    /// Uniform in [−1, 1).
    fn signed(&mut self) -> f64 {
        2.0 * self.unit() - 1.0
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn splitmix_matches_its_published_sequence() {
        // First outputs for seed 0, from the reference C implementation (Vigna, splitmix64.c),
        // from memory: 0xe220a8397b1dcdaf, 0x6e789e6aa1b965f4.
        let mut random = SplitMix64::new(0);
        assert_eq!(random.next(), 0xe220_a839_7b1d_cdaf);
        assert_eq!(random.next(), 0x6e78_9e6a_a1b9_65f4);
    }

    #[test]
    fn same_seed_same_samples_different_seed_different_samples() {
        let spec = ProgrammeSpec::new(48_000.0, 2, 0.5, 7);
        let first = generate(&spec);
        assert_eq!(first.len(), 24_000 * 2);
        assert_eq!(first, generate(&spec));
        let other = generate(&ProgrammeSpec { seed: 8, ..spec });
        assert_ne!(first, other);
    }

    #[test]
    fn peaks_at_the_requested_level_and_channels_differ() {
        let spec = ProgrammeSpec::new(44_100.0, 2, 1.0, 3);
        let samples = generate(&spec);
        let peak = samples.iter().fold(0.0f32, |m, x| m.max(x.abs()));
        assert!((peak - 0.25).abs() < 1e-6, "peak {peak}");
        let left: Vec<f32> = samples.iter().step_by(2).copied().collect();
        let right: Vec<f32> = samples.iter().skip(1).step_by(2).copied().collect();
        assert_ne!(left, right);
    }

    #[test]
    fn has_transients_and_is_not_silent_anywhere_long() {
        // Every 50 ms window carries signal (tones never stop), and some sample-to-sample jumps
        // are far larger than the tones alone allow (the clicks).
        let spec = ProgrammeSpec::new(48_000.0, 1, 2.0, 11);
        let samples = generate(&spec);
        for window in samples.chunks(2_400) {
            let energy: f32 = window.iter().map(|x| x * x).sum();
            assert!(energy > 1e-4, "quiet window");
        }
        let biggest_step = samples
            .windows(2)
            .fold(0.0f32, |m, w| m.max((w[1] - w[0]).abs()));
        assert!(biggest_step > 0.1, "no transient: {biggest_step}");
    }
}
