//! A signal's recent past in one contiguous run of memory, so that any lagged stretch of it can
//! be read as a plain slice (which the compiler turns into whole-register loads).
//!
//! Samples are appended at a write position; the `span` samples before it are the history.
//! When the run area after the history is used up, the history is copied back to the front
//! (`span` copies once every `run` samples: at most one copy per sample, bounded work), so no
//! ring-buffer index arithmetic or wrap-around split is needed on the reading side.

/// Shortest run area: the history is moved at most once every this many samples.
const MIN_RUN: usize = 1024;

#[derive(Debug, Clone, PartialEq)]
pub(crate) struct HistoryLine {
    data: Vec<f64>,
    /// Samples of history kept before the write position (the longest lag read).
    span: usize,
    /// Index of the next sample to be written; `data[pos − span .. pos]` is the history.
    pos: usize,
}

impl HistoryLine {
    /// A line that can be read back `span` samples (control side: allocates).
    pub fn new(span: usize) -> Self {
        let run = MIN_RUN.max(2 * span);
        Self {
            data: vec![0.0; span + run],
            span,
            pos: span,
        }
    }

    /// Most samples that can be appended in one go.
    pub fn run(&self) -> usize {
        self.data.len() - self.span
    }

    /// Makes room for `n` ≤ [`HistoryLine::run`] samples at the write position.
    #[inline(always)]
    pub fn make_room(&mut self, n: usize) {
        if self.pos + n > self.data.len() {
            let from = self.pos - self.span;
            self.data.copy_within(from..self.pos, 0);
            self.pos = self.span;
        }
    }

    /// The `n` slots at the write position (after [`HistoryLine::make_room`]).
    #[inline(always)]
    pub fn slots(&mut self, n: usize) -> &mut [f64] {
        &mut self.data[self.pos..self.pos + n]
    }

    /// `n` samples starting `lag` samples before the write position: for lag ≥ n all history,
    /// for smaller lags the tail reaches into the slots just written.
    #[inline(always)]
    pub fn lagged(&self, lag: usize, n: usize) -> &[f64] {
        let start = self.pos - lag;
        &self.data[start..start + n]
    }

    /// Moves the write position past `n` written samples.
    #[inline(always)]
    pub fn advance(&mut self, n: usize) {
        self.pos += n;
    }

    /// Silence in the past.
    pub fn reset(&mut self) {
        self.data.fill(0.0);
        self.pos = self.span;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: common practice — a delay line returns what was written `lag` samples ago, and
    // zeros before anything was written; moving the history to the front changes nothing.
    #[test]
    fn lagged_reads_survive_the_move_to_the_front() {
        let mut line = HistoryLine::new(5);
        let mut written = Vec::new();
        for k in 0..3000 {
            line.make_room(1);
            line.slots(1)[0] = k as f64;
            written.push(k as f64);
            line.advance(1);
            for lag in 1..=5usize {
                let expected = if k + 1 >= lag {
                    written[k + 1 - lag]
                } else {
                    0.0
                };
                assert_eq!(line.lagged(lag, 1)[0], expected, "k {k} lag {lag}");
            }
        }
    }
}
