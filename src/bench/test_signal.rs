//! The round-trip test signal and how it is found again: a maximum-length sequence (MLS) and
//! its cross-correlation with what came back.
//!
//! An MLS of order m has period 2^m − 1 and a circular autocorrelation of 2^m − 1 at lag 0 and
//! −1 at every other lag (common practice), so its correlation with a delayed, filtered or
//! noisy copy peaks sharply at the delay even at low level.

/// One period of the maximum-length sequence of order `order` (2…20), as ±1.
///
/// Fibonacci shift register (shifting towards bit 0, tap t reading bit n − t) with feedback
/// taps from the table of maximal-length taps (Xilinx application note XAPP052, from memory)
/// for the orders used here; other orders fall back to order 13.
pub fn mls(order: u32) -> Vec<f32> {
    let (order, taps): (u32, &[u32]) = match order {
        10 => (10, &[10, 7]),
        11 => (11, &[11, 9]),
        12 => (12, &[12, 6, 4, 1]),
        14 => (14, &[14, 5, 3, 1]),
        15 => (15, &[15, 14]),
        _ => (13, &[13, 4, 3, 1]),
    };
    let length = (1usize << order) - 1;
    let mut register: u32 = 1;
    let mut out = Vec::with_capacity(length);
    for _ in 0..length {
        let bit = taps
            .iter()
            .fold(0, |acc, &t| acc ^ ((register >> (order - t)) & 1));
        out.push(if register & 1 == 1 { 1.0 } else { -1.0 });
        register = (register >> 1) | (bit << (order - 1));
    }
    out
}

/// Where `reference` starts in `recorded`: the lag (0 … `max_lag`) of the largest
/// cross-correlation, and the peak over the largest value more than two samples away from it,
/// in dB (how clearly the signal was found). `None` when `recorded` is too short or silent.
pub fn find_delay(recorded: &[f32], reference: &[f32], max_lag: usize) -> Option<(usize, f64)> {
    if reference.is_empty() || recorded.len() < reference.len() {
        return None;
    }
    let last = (recorded.len() - reference.len()).min(max_lag);
    let correlation: Vec<f64> = (0..=last)
        .map(|lag| {
            recorded[lag..lag + reference.len()]
                .iter()
                .zip(reference)
                .map(|(a, b)| f64::from(*a) * f64::from(*b))
                .sum::<f64>()
        })
        .collect();
    let (peak_lag, peak) = correlation
        .iter()
        .enumerate()
        .map(|(i, c)| (i, c.abs()))
        .max_by(|a, b| a.1.total_cmp(&b.1))?;
    if peak <= 0.0 {
        return None;
    }
    let side = correlation
        .iter()
        .enumerate()
        .filter(|(i, _)| i.abs_diff(peak_lag) > 2)
        .map(|(_, c)| c.abs())
        .fold(0.0f64, f64::max);
    let clarity_db = if side > 0.0 {
        20.0 * (peak / side).log10()
    } else {
        f64::INFINITY
    };
    Some((peak_lag, clarity_db))
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: common practice — an MLS of order m has period 2^m − 1, one more +1 than −1, and
    // circular autocorrelation 2^m − 1 at lag 0 and −1 at every other lag.
    #[test]
    fn sequences_are_maximal_length() {
        for order in [10, 11, 12, 13, 14] {
            let s = mls(order);
            let n = s.len();
            assert_eq!(n, (1 << order) - 1);
            let ones = s.iter().filter(|&&v| v > 0.0).count();
            assert_eq!(ones, n / 2 + 1, "order {order}");
            for lag in [0, 1, 2, 17, n / 3, n - 1] {
                let r: f64 = (0..n)
                    .map(|i| f64::from(s[i]) * f64::from(s[(i + lag) % n]))
                    .sum();
                let want = if lag == 0 { n as f64 } else { -1.0 };
                assert_eq!(r, want, "order {order}, lag {lag}");
            }
        }
    }

    // Source: common practice — the correlation peak sits at the delay, also after a gain, a
    // little noise and a short echo.
    #[test]
    fn finds_a_delayed_scaled_copy() {
        let s = mls(12);
        let delay = 1234;
        let mut recorded = vec![0.0f32; delay + s.len() + 500];
        for (i, v) in s.iter().enumerate() {
            recorded[delay + i] += 0.05 * v;
            recorded[delay + i + 40] += 0.02 * v;
        }
        for (i, r) in recorded.iter_mut().enumerate() {
            *r += 0.01 * ((i as f32 * 12.9898).sin() * 43_758.547).fract();
        }
        let (lag, clarity) = find_delay(&recorded, &s, 4000).unwrap();
        assert_eq!(lag, delay);
        assert!(clarity > 6.0, "{clarity}");
        assert_eq!(find_delay(&recorded[..100], &s, 4000), None);
    }
}
