//! One delay line per channel, each as long as that channel's latency: what bypass plays, so
//! that falling back to the input never moves the output in time against the set that ran.
//!
//! Sized on the control side when the set is built; running them allocates nothing.

/// Per-channel delay lines over interleaved frames; a channel of latency 0 passes through.
#[derive(Debug, Clone)]
pub struct DelayLines {
    channels: usize,
    /// Every line's samples, one after the other: line c is `store[start[c]..start[c] + len[c]]`.
    store: Vec<f32>,
    start: Vec<usize>,
    len: Vec<usize>,
    /// Per line: where the oldest sample (the one to play next) is.
    pos: Vec<usize>,
}

impl DelayLines {
    /// Lines of `latency[c]` samples for each channel c, holding silence.
    pub fn new(latency: &[usize]) -> Self {
        let mut start = Vec::with_capacity(latency.len());
        let mut total = 0;
        for &l in latency {
            start.push(total);
            total += l;
        }
        Self {
            channels: latency.len(),
            store: vec![0.0; total],
            start,
            len: latency.to_vec(),
            pos: vec![0; latency.len()],
        }
    }

    /// Delays interleaved frames (whole frames of the shorter slice): `output` gets each
    /// channel's input from its latency ago.
    pub fn process(&mut self, input: &[f32], output: &mut [f64]) {
        let channels = self.channels;
        if channels == 0 {
            return;
        }
        for (x, y) in input
            .chunks_exact(channels)
            .zip(output.chunks_exact_mut(channels))
        {
            for c in 0..channels {
                let len = self.len[c];
                if len == 0 {
                    y[c] = f64::from(x[c]);
                    continue;
                }
                let at = self.start[c] + self.pos[c];
                y[c] = f64::from(self.store[at]);
                self.store[at] = x[c];
                self.pos[c] = if self.pos[c] + 1 == len {
                    0
                } else {
                    self.pos[c] + 1
                };
            }
        }
    }

    /// Channel `channel`'s delay in samples (0 for an absent channel).
    pub fn latency(&self, channel: usize) -> usize {
        self.len.get(channel).copied().unwrap_or(0)
    }

    /// Silence in every line.
    pub fn reset(&mut self) {
        self.store.fill(0.0);
        self.pos.fill(0);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: common practice — a delay line of length D gives x[n − D], zero before the start.
    #[test]
    fn each_channel_is_delayed_by_its_own_latency() {
        let mut lines = DelayLines::new(&[0, 3, 1]);
        let input: Vec<f32> = (0..30).map(|i| i as f32 + 1.0).collect();
        let mut out = vec![0.0; 30];
        // Two calls, cut mid-way, give the same as one.
        lines.process(&input[..12], &mut out[..12]);
        lines.process(&input[12..], &mut out[12..]);
        for n in 0..10 {
            for (c, d) in [0usize, 3, 1].into_iter().enumerate() {
                let expected = if n >= d { input[(n - d) * 3 + c] } else { 0.0 };
                assert_eq!(out[n * 3 + c], f64::from(expected), "frame {n} channel {c}");
            }
        }
    }
}
