//! A stimulus played several times back to back, and its recording cut into one capture per
//! repeat: averaged, the captures keep the link's response and lose noise (N captures of
//! independent noise average to 1/N of its power, 10·log10 N dB less: common practice); compared,
//! they show whether the link stayed the same from one repeat to the next.

use super::error::MeasureError;

/// Two copies count as the same stimulus when no sample differs by more than this fraction of
/// the peak (a stimulus read back from a 16-bit file differs by its rounding, 3·10⁻⁵).
const SAME_COPY_FRACTION: f64 = 1e-4;

/// Finds the period of `stimulus` (its trailing silence already cut) when it holds `repeats`
/// identical copies, each a signal followed by the same silence; `repeats` = 1 gives the whole
/// length.
pub fn repeat_period(
    stimulus: &[f64],
    repeats: usize,
    stimulus_name: &str,
) -> Result<usize, MeasureError> {
    let not_repeated = |why: String| MeasureError::NotRepeated {
        stimulus: stimulus_name.to_string(),
        repeats,
        why,
    };
    if repeats <= 1 {
        return Ok(stimulus.len());
    }
    let first = stimulus
        .iter()
        .position(|v| *v != 0.0)
        .ok_or_else(|| not_repeated("it is silent".into()))?;
    let peak = stimulus.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let tolerance = SAME_COPY_FRACTION * peak;
    let same = |a: &[f64], b: &[f64]| a.iter().zip(b).all(|(x, y)| (x - y).abs() <= tolerance);
    // With the trailing silence cut, the length is (repeats − 1)·P + S for a signal of S ≤ P
    // frames: P lies between length/repeats and length/(repeats − 1).
    let length = stimulus.len();
    let lowest = length / repeats;
    let highest = length / (repeats - 1);
    let probe = 64.min(length - first);
    let period = (lowest.max(1)..=highest)
        .find(|&p| {
            first + p + probe <= length
                && same(
                    &stimulus[first..first + probe],
                    &stimulus[first + p..first + p + probe],
                )
                && same(&stimulus[..length - p], &stimulus[p..])
        })
        .ok_or_else(|| {
            not_repeated(format!(
                "no period between {lowest} and {highest} frames repeats it {repeats} times"
            ))
        })?;
    Ok(period)
}

/// Capture `index` of `recording`: the frames from `index · period` on, `length` long (shorter
/// when the recording ends first).
pub fn capture(recording: &[f64], period: usize, index: usize, length: usize) -> &[f64] {
    let start = (index * period).min(recording.len());
    &recording[start..(start + length).min(recording.len())]
}

/// The mean of the `repeats` captures of `recording`, each as long as the last one can be.
pub fn average_captures(recording: &[f64], period: usize, repeats: usize) -> Vec<f64> {
    let repeats = repeats.max(1);
    let length = recording.len().saturating_sub((repeats - 1) * period);
    let mut mean = vec![0.0; length];
    for i in 0..repeats {
        for (m, v) in mean.iter_mut().zip(capture(recording, period, i, length)) {
            *m += v;
        }
    }
    mean.iter_mut().for_each(|m| *m /= repeats as f64);
    mean
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_period_is_found_with_and_without_silence_between_copies() {
        let signal: Vec<f64> = (0..500)
            .map(|n| ((n * 7 % 13) as f64 - 6.0) / 6.0)
            .collect();
        for silence in [0usize, 37] {
            let mut copy = signal.clone();
            copy.resize(500 + silence, 0.0);
            let mut stimulus = copy.repeat(4);
            stimulus.truncate(4 * (500 + silence) - silence);
            assert_eq!(repeat_period(&stimulus, 4, "s").unwrap(), 500 + silence);
        }
        let varied: Vec<f64> = (0..2000).map(|n| (n as f64 * 0.37).sin()).collect();
        assert!(matches!(
            repeat_period(&varied, 3, "s"),
            Err(MeasureError::NotRepeated { .. })
        ));
    }

    #[test]
    fn averaging_keeps_the_common_part() {
        let recording = [1.0, 2.0, 3.0, 5.0, 6.0, 7.0, 9.0];
        assert_eq!(average_captures(&recording, 3, 2), vec![3.0, 4.0, 5.0, 7.0]);
        assert_eq!(capture(&recording, 3, 1, 10), &[5.0, 6.0, 7.0, 9.0]);
    }
}
