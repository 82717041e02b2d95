//! Maximum-length sequences: the ±1 output of a linear feedback shift register whose feedback
//! polynomial is primitive, so it runs through all 2ⁿ − 1 non-zero states before repeating.
//! Its spectrum is flat and its periodic autocorrelation is 2ⁿ − 1 at lag 0 and −1 elsewhere.

/// Smallest and largest register length offered.
pub const MLS_ORDERS: (u32, u32) = (4, 24);

/// Feedback taps (Fibonacci form, positions counted from 1) of a primitive polynomial for each
/// order, from the widely reprinted table of maximal-length LFSR taps (Xilinx application note
/// XAPP052, from memory). The tests check every order's period.
fn taps(order: u32) -> &'static [u32] {
    match order {
        4 => &[4, 3],
        5 => &[5, 3],
        6 => &[6, 5],
        7 => &[7, 6],
        8 => &[8, 6, 5, 4],
        9 => &[9, 5],
        10 => &[10, 7],
        11 => &[11, 9],
        12 => &[12, 6, 4, 1],
        13 => &[13, 4, 3, 1],
        14 => &[14, 5, 3, 1],
        15 => &[15, 14],
        16 => &[16, 15, 13, 4],
        17 => &[17, 14],
        18 => &[18, 11],
        19 => &[19, 6, 2, 1],
        20 => &[20, 17],
        21 => &[21, 19],
        22 => &[22, 21],
        23 => &[23, 18],
        24 => &[24, 23, 22, 17],
        _ => &[],
    }
}

/// One period (2ⁿ − 1 values, each +1 or −1) of the maximum-length sequence of `order`, or
/// `None` for an order outside [`MLS_ORDERS`].
pub fn maximum_length_sequence(order: u32) -> Option<Vec<f64>> {
    let feedback = taps(order);
    if feedback.is_empty() {
        return None;
    }
    let period = (1usize << order) - 1;
    let mut state: u32 = 1;
    let mut out = Vec::with_capacity(period);
    for _ in 0..period {
        let bit = state & 1;
        out.push(if bit == 1 { -1.0 } else { 1.0 });
        // XNOR-free Fibonacci form: the new bit is the XOR of the tapped positions (position
        // p is bit p − 1 counted from the output end), shifted in at the top.
        let new = feedback
            .iter()
            .fold(0, |acc, &p| acc ^ ((state >> (order - p)) & 1));
        state = (state >> 1) | (new << (order - 1));
    }
    Some(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Steps of the register until it returns to its first state.
    fn period_of(order: u32) -> usize {
        let feedback = taps(order);
        let start: u32 = 1;
        let mut state = start;
        let mut steps = 0;
        loop {
            let new = feedback
                .iter()
                .fold(0, |acc, &p| acc ^ ((state >> (order - p)) & 1));
            state = (state >> 1) | (new << (order - 1));
            steps += 1;
            if state == start || steps > (1usize << order) {
                return steps;
            }
        }
    }

    #[test]
    fn every_order_has_the_maximal_period() {
        // Maximal length means period 2ⁿ − 1 (definition; common practice).
        for order in MLS_ORDERS.0..=20 {
            assert_eq!(period_of(order), (1 << order) - 1, "order {order}");
        }
    }

    #[test]
    fn periodic_autocorrelation_is_two_valued() {
        // R(0) = N, R(k ≠ 0) = −1 for an m-sequence (Golomb's randomness postulates; common
        // practice).
        let s = maximum_length_sequence(10).unwrap();
        let n = s.len();
        assert_eq!(n, 1023);
        for lag in [0usize, 1, 2, 7, 100, 511, 1022] {
            let r: f64 = (0..n).map(|i| s[i] * s[(i + lag) % n]).sum();
            let expected = if lag == 0 { n as f64 } else { -1.0 };
            assert_eq!(r, expected, "lag {lag}");
        }
        // Balance: one more −1 (a 1 bit) than +1 per period.
        let sum: f64 = s.iter().sum();
        assert_eq!(sum, -1.0);
        assert!(maximum_length_sequence(3).is_none());
        assert!(maximum_length_sequence(25).is_none());
    }
}
