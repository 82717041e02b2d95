//! Input that is not audio: replaced by silence before anything sees it.
//!
//! A NaN or ±∞ from the capture side (or a float stream's garbage far beyond full scale) is a
//! fault of the input, not of the filters: let through, it would poison every recursion it
//! entered and lift the guard's input envelope for good. So each such sample becomes 0 and is
//! counted; the filters, their state and the running set stay as they were.

use super::settings::INPUT_CEILING;

/// What one pass over a chunk found.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct InputFaults {
    /// Samples replaced by silence.
    pub replaced: u64,
    /// Of those, the NaN and ±∞ ones.
    pub non_finite: u64,
}

/// Copies `input` into `clean` (the shorter length counts), silencing every sample that is not
/// finite or lies beyond ±[`INPUT_CEILING`]. Bounded work, nothing allocated.
pub fn silence_faults(input: &[f32], clean: &mut [f32]) -> InputFaults {
    let mut found = InputFaults::default();
    for (x, c) in input.iter().zip(clean.iter_mut()) {
        // One comparison covers both: NaN fails it, ±∞ exceeds the ceiling.
        if x.abs() <= INPUT_CEILING {
            *c = *x;
        } else {
            *c = 0.0;
            found.replaced += 1;
            found.non_finite += u64::from(!x.is_finite());
        }
    }
    found
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: IEEE 754 — NaN compares false with everything, ±∞ exceeds every finite number.
    #[test]
    fn only_samples_that_are_not_audio_are_silenced() {
        let input = [
            0.5,
            f32::NAN,
            -1.5,
            f32::INFINITY,
            f32::NEG_INFINITY,
            2000.0,
            -999.0,
        ];
        let mut clean = [9.0; 7];
        let found = silence_faults(&input, &mut clean);
        assert_eq!(clean, [0.5, 0.0, -1.5, 0.0, 0.0, 0.0, -999.0]);
        assert_eq!(
            found,
            InputFaults {
                replaced: 4,
                non_finite: 3
            }
        );
    }
}
