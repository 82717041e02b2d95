//! Choosing a stream configuration a device offers for the requested rate, channels and period.

use std::collections::BTreeSet;

use cpal::{BufferSize, StreamConfig, SupportedBufferSize, SupportedStreamConfigRange};

use super::devices::summarize_configs;
use super::error::{Direction, LiveError};
use super::samples::DeviceFormat;

/// Period used when the request leaves it open: ≈ 10.7 ms at 48 kHz, short enough for live
/// monitoring and long enough for an ordinary desktop scheduler (common practice: 256–1024).
pub const DEFAULT_PERIOD_FRAMES: u32 = 512;

/// What was chosen for one direction.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) struct Choice {
    pub format: DeviceFormat,
    pub config: StreamConfig,
    pub period_frames: u32,
}

/// Picks the first format in [`DeviceFormat::PREFERENCE`] that `offered` has at exactly
/// `sample_rate` and `channels`. A requested period must lie in the device's range; with none
/// requested, [`DEFAULT_PERIOD_FRAMES`] is moved into the range.
pub(crate) fn choose_config(
    direction: Direction,
    device: &str,
    offered: &[SupportedStreamConfigRange],
    sample_rate: u32,
    channels: u16,
    period: Option<u32>,
) -> Result<Choice, LiveError> {
    let wanted = match period {
        Some(p) => format!("{channels} channel(s) at {sample_rate} Hz with a {p}-frame period"),
        None => format!("{channels} channel(s) at {sample_rate} Hz"),
    };
    let refuse = |why: String| LiveError::ConfigUnsupported {
        direction,
        device: device.to_string(),
        wanted: wanted.clone(),
        why,
        offered: summarize_configs(offered),
    };
    let fitting =
        |r: &&SupportedStreamConfigRange| r.channels() == channels && r.contains_rate(sample_rate);
    let Some((format, range)) = DeviceFormat::PREFERENCE.iter().find_map(|f| {
        offered
            .iter()
            .filter(fitting)
            .find(|r| r.sample_format() == f.to_cpal())
            .map(|r| (*f, r))
    }) else {
        let rates = rates_with_channels(offered, channels);
        let runs_the_rate = offered
            .iter()
            .any(|r| r.channels() == channels && r.contains_rate(sample_rate));
        if !rates.is_empty() && !runs_the_rate {
            return Err(LiveError::RateMismatch {
                direction,
                device: device.to_string(),
                design_rate: sample_rate,
                device_rates: rates,
            });
        }
        return Err(refuse(why_nothing_fits(offered, sample_rate, channels)));
    };
    let period_frames = match (range.buffer_size(), period) {
        (SupportedBufferSize::Range { min, max }, Some(p)) if !(*min..=*max).contains(&p) => {
            return Err(refuse(format!(
                "a period of {p} frames is outside the {min}–{max} frames it accepts"
            )))
        }
        (_, Some(p)) => p,
        (SupportedBufferSize::Range { min, max }, None) => {
            DEFAULT_PERIOD_FRAMES.clamp(*min, (*max).max(*min))
        }
        (SupportedBufferSize::Unknown, None) => DEFAULT_PERIOD_FRAMES,
    };
    Ok(Choice {
        format,
        config: StreamConfig {
            channels,
            sample_rate,
            buffer_size: BufferSize::Fixed(period_frames),
        },
        period_frames,
    })
}

/// The rates `offered` runs with `channels` channels, in order, each once: "44100 Hz" or
/// "8000–44100 Hz".
fn rates_with_channels(offered: &[SupportedStreamConfigRange], channels: u16) -> Vec<String> {
    let ranges: BTreeSet<(u32, u32)> = offered
        .iter()
        .filter(|r| r.channels() == channels)
        .map(|r| (r.min_sample_rate(), r.max_sample_rate()))
        .collect();
    ranges
        .into_iter()
        .map(|(lo, hi)| match lo == hi {
            true => format!("{lo} Hz"),
            false => format!("{lo}–{hi} Hz"),
        })
        .collect()
}

fn why_nothing_fits(offered: &[SupportedStreamConfigRange], rate: u32, channels: u16) -> String {
    if offered.is_empty() {
        return "it reports no configuration at all".to_string();
    }
    let with_channels: Vec<&SupportedStreamConfigRange> = offered
        .iter()
        .filter(|r| r.channels() == channels)
        .collect();
    if with_channels.is_empty() {
        let counts: BTreeSet<u16> = offered.iter().map(|r| r.channels()).collect();
        let counts: Vec<String> = counts.iter().map(u16::to_string).collect();
        return format!(
            "it has no {channels}-channel mode (it offers {} channels)",
            counts.join(", ")
        );
    }
    let at_rate: Vec<&&SupportedStreamConfigRange> = with_channels
        .iter()
        .filter(|r| r.contains_rate(rate))
        .collect();
    if at_rate.is_empty() {
        return format!("it does not run {channels} channel(s) at {rate} Hz");
    }
    let formats: BTreeSet<String> = at_rate
        .iter()
        .map(|r| r.sample_format().to_string())
        .collect();
    format!(
        "at that rate and channel count it offers only {} samples, and this tool runs f32, i32, \
         i24 (24 bits in 32) or i16; packed 24-bit devices are reached through ALSA's plughw: \
         device, which converts",
        formats.into_iter().collect::<Vec<_>>().join(", ")
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use cpal::SampleFormat;

    fn range(ch: u16, lo: u32, hi: u32, format: SampleFormat) -> SupportedStreamConfigRange {
        SupportedStreamConfigRange::new(
            ch,
            lo,
            hi,
            SupportedBufferSize::Range { min: 64, max: 4096 },
            format,
        )
    }

    fn choose(
        offered: &[SupportedStreamConfigRange],
        period: Option<u32>,
    ) -> Result<Choice, LiveError> {
        choose_config(Direction::Capture, "alsa:test", offered, 48_000, 2, period)
    }

    #[test]
    fn float_is_preferred_and_the_default_period_applies() {
        let offered = [
            range(2, 8_000, 192_000, SampleFormat::I16),
            range(2, 8_000, 192_000, SampleFormat::F32),
        ];
        let c = choose(&offered, None).unwrap();
        assert_eq!(c.format, DeviceFormat::F32);
        assert_eq!(c.period_frames, DEFAULT_PERIOD_FRAMES);
        assert_eq!(
            c.config.buffer_size,
            BufferSize::Fixed(DEFAULT_PERIOD_FRAMES)
        );
    }

    #[test]
    fn integer_device_is_taken_when_it_is_all_there_is() {
        let offered = [
            range(2, 48_000, 48_000, SampleFormat::U8),
            range(2, 48_000, 48_000, SampleFormat::I16),
        ];
        assert_eq!(
            choose(&offered, Some(256)).unwrap().format,
            DeviceFormat::I16
        );
    }

    #[test]
    fn default_period_moves_into_a_narrow_range() {
        let offered = [SupportedStreamConfigRange::new(
            2,
            48_000,
            48_000,
            SupportedBufferSize::Range {
                min: 1024,
                max: 8192,
            },
            SampleFormat::F32,
        )];
        assert_eq!(choose(&offered, None).unwrap().period_frames, 1024);
    }

    #[test]
    fn refusals_say_what_the_device_offers() {
        let offered = [range(1, 44_100, 44_100, SampleFormat::I16)];
        let text = choose(&offered, None).unwrap_err().to_string();
        assert!(
            text.contains("it has no 2-channel mode (it offers 1 channels)"),
            "{text}"
        );
        assert!(text.contains("i16: 1 channel, 44100 Hz"), "{text}");

        // Common practice: a digital filter designed at one rate, run at another, has its whole
        // response moved by the ratio, so a device that cannot run the design rate is refused
        // by name with both rates (never run, never resampled silently).
        let offered = [
            range(2, 44_100, 44_100, SampleFormat::I16),
            range(2, 8_000, 32_000, SampleFormat::F32),
            range(1, 48_000, 48_000, SampleFormat::F32),
        ];
        let err = choose(&offered, None).unwrap_err();
        assert!(matches!(err, LiveError::RateMismatch { .. }), "{err:?}");
        let text = err.to_string();
        assert!(
            text.contains(
                "runs at 8000–32000 Hz or 44100 Hz, and the config's filters are designed for \
                 48000 Hz"
            ),
            "{text}"
        );
        assert!(
            text.contains("help: set the device (or its sound server) to 48000 Hz"),
            "{text}"
        );

        let offered = [range(2, 48_000, 48_000, SampleFormat::U8)];
        let text = choose(&offered, None).unwrap_err().to_string();
        assert!(text.contains("offers only u8 samples"), "{text}");

        let offered = [range(2, 48_000, 48_000, SampleFormat::F32)];
        let text = choose(&offered, Some(10_000)).unwrap_err().to_string();
        assert!(
            text.contains("period of 10000 frames is outside the 64–4096"),
            "{text}"
        );
    }
}
