//! Reading what the paced devices recorded and accounting for every frame of it.
//!
//! The live output is compared with offline results ("candidates": each filter that may be
//! running, and the input itself for bypass). Walking the recording, every frame must equal the
//! running candidate's frame at the current alignment, or belong to a short transition (a
//! crossfade, a fade-in after a guard reset) after which some candidate resumes at the same
//! alignment, or to a gap the device path made: silence the playback side inserted, frames the
//! capture side dropped. The walk counts each kind; the tests compare the gaps with the
//! engine's own under- and overrun counters and the transitions with its swap and trip counters.

#![allow(dead_code)]

use std::path::Path;

use redress::engine::Equalizer;
use redress::model::config::parse_link;
use redress::pipeline::plan_link;

pub const CHANNELS: usize = 2;
/// Both sides compute the same f64 recursion and round once to f32.
pub const TOLERANCE: f32 = 1e-6;
/// Frames compared to accept an alignment or a resumption.
const PROBE: usize = 8;
/// Largest shift of alignment a device gap may make when a transition follows it (frames)…
const MAX_SHIFT: usize = 8192;
/// …and when the output resumes at once: a loaded machine can stall playback for seconds while
/// capture runs on and the ring overflows (every dropped sample counted as an overrun).
const MAX_DROP: usize = 4 * 48_000;

pub fn read_raw(path: &Path) -> Vec<f32> {
    std::fs::read(path)
        .unwrap()
        .chunks_exact(4)
        .map(|b| f32::from_le_bytes([b[0], b[1], b[2], b[3]]))
        .collect()
}

pub fn write_raw(path: &Path, samples: &[f32]) {
    let bytes: Vec<u8> = samples.iter().flat_map(|s| s.to_le_bytes()).collect();
    std::fs::write(path, bytes).unwrap();
}

/// The filter of `config` run offline over `input`, the way the engine treats input that is
/// not audio (NaN, ±∞): silenced before the filter sees it, the filter running on.
pub fn offline(config: &str, input: &[f32]) -> Vec<f32> {
    let link = parse_link(config, None).unwrap();
    let mut eq = Equalizer::from_plan(&plan_link(&link), 0).unwrap();
    let mut out = vec![0.0; input.len()];
    eq.process_interleaved(&bypass(input), &mut out);
    out
}

/// The input as bypass plays it (non-finite samples silenced by the clip guard).
pub fn bypass(input: &[f32]) -> Vec<f32> {
    input
        .iter()
        .map(|v| if v.is_finite() { *v } else { 0.0 })
        .collect()
}

/// What the walk found.
#[derive(Debug, Default)]
pub struct Walk {
    /// Reference frames checked, and how many of them matched a candidate exactly.
    pub checked: usize,
    pub matched: usize,
    /// (reference frame, length) of every transition.
    pub transitions: Vec<(usize, usize)>,
    /// Frames of silence inserted and frames dropped by the device path.
    pub inserted: usize,
    pub dropped: usize,
    /// Reference frames where a gap was found.
    pub gaps_at: Vec<usize>,
    /// Frames matched per candidate, and the candidate running at the end.
    pub per_candidate: Vec<usize>,
    pub last_candidate: usize,
    /// Live frame minus reference frame where the walk started and where it ended: the device
    /// path's net shift (inserted minus dropped frames) over the stretch walked.
    pub first_offset: isize,
    pub last_offset: isize,
}

fn matches(live: &[f32], l: isize, reference: &[f32], r: usize) -> bool {
    if l < 0 {
        return false;
    }
    let l = l as usize;
    (l + 1) * CHANNELS <= live.len()
        && (r + 1) * CHANNELS <= reference.len()
        && (0..CHANNELS)
            .all(|c| (live[l * CHANNELS + c] - reference[r * CHANNELS + c]).abs() <= TOLERANCE)
}

/// A resumption is only believed on a stretch that is not silence in the reference.
fn loud(reference: &[f32], r: usize) -> bool {
    (0..PROBE * CHANNELS).any(|i| {
        reference
            .get(r * CHANNELS + i)
            .is_some_and(|v| v.abs() > 1e-4)
    })
}

fn aligned(live: &[f32], offset: isize, reference: &[f32], r: usize) -> bool {
    (0..PROBE).all(|k| matches(live, r as isize + k as isize + offset, reference, r + k))
}

fn run_matches(live: &[f32], offset: isize, reference: &[f32], r: usize) -> bool {
    loud(reference, r) && aligned(live, offset, reference, r)
}

/// Walks reference frames `from..to`. Panics, saying where, on a frame nothing explains.
pub fn walk(
    live: &[f32],
    candidates: &[&[f32]],
    from: usize,
    to: usize,
    max_transition: usize,
) -> Walk {
    let live_frames = (live.len() / CHANNELS) as isize;
    let mut w = Walk {
        per_candidate: vec![0; candidates.len()],
        ..Walk::default()
    };
    // Initial alignment: the first live frame where a candidate's `from` frame begins.
    let (mut offset, mut current) = (0..live_frames)
        .find_map(|l| {
            let offset = l - from as isize;
            (0..candidates.len())
                .find(|&c| run_matches(live, offset, candidates[c], from))
                .map(|c| (offset, c))
        })
        .expect("a candidate's output appears in the recording");
    w.first_offset = offset;
    let mut n = from;
    while n < to {
        assert!(
            n as isize + offset < live_frames,
            "the recording ends at reference frame {n}"
        );
        w.checked += 1;
        if matches(live, n as isize + offset, candidates[current], n) {
            w.matched += 1;
            w.per_candidate[current] += 1;
            n += 1;
            continue;
        }
        if let Some(c) = (0..candidates.len())
            .find(|&c| c != current && run_matches(live, offset, candidates[c], n))
        {
            current = c;
            continue;
        }
        // A transition: some candidate resumes at the same alignment within max_transition.
        let resumed = (1..=max_transition).find_map(|k| {
            (0..candidates.len())
                .find(|&c| run_matches(live, offset, candidates[c], n + k))
                .map(|c| (k, c))
        });
        if let Some((k, c)) = resumed {
            let l0 = n as isize + offset;
            let all_silent = (0..k as isize).all(|i| {
                let l = l0 + i;
                l >= 0 && (0..CHANNELS).all(|ch| live[l as usize * CHANNELS + ch] == 0.0)
            });
            if all_silent {
                // Silence inserted by the playback side, as many frames dropped by the capture
                // side: a device gap that happens to leave the alignment where it was.
                w.inserted += k;
                w.dropped += k;
                w.gaps_at.push(n);
            } else {
                w.transitions.push((n, k));
            }
            w.checked += k - 1;
            current = c;
            n += k;
            continue;
        }
        // A device gap: silence inserted (the alignment moves later), then possibly frames
        // dropped (it moves earlier); the output resumes within a transition's length.
        let l0 = n as isize + offset;
        let silent = (0..MAX_SHIFT as isize)
            .take_while(|&k| {
                let l = l0 + k;
                l < live_frames && (0..CHANNELS).all(|c| live[l as usize * CHANNELS + c] == 0.0)
            })
            .count();
        // Frames the capture side dropped are missing from the recording: the output
        // resumes with reference frame n + k right after the silence, possibly through a
        // transition of j frames (a fade-in after the streams restarted). Silence the playback
        // side inserts in the middle of a transition (a crossfade cut by an underrun) shows as
        // k < 0: the output resumes |k| frames later than the transition alone explains, and
        // those frames must be silent ones inside it.
        let l_after = l0 + silent as isize;
        let resume = (0..=max_transition).find_map(|j| {
            let earliest = if j == 0 { 0 } else { -(j as isize) };
            let latest = if j == 0 { MAX_DROP } else { MAX_SHIFT } as isize;
            (earliest..latest).find_map(|k| {
                let o = offset + silent as isize - k;
                let r = n as isize + k + j as isize;
                let inserted_inside = (-k).max(0) as usize;
                (0..candidates.len())
                    .find(|&c| run_matches(live, o, candidates[c], r as usize))
                    .filter(|_| {
                        inserted_inside == 0
                            || silent_frames(live, l_after as usize, l_after as usize + j)
                                >= inserted_inside
                    })
                    .map(|c| (j, k, o, c))
            })
        });
        let Some((j, k, o, c)) = resume else {
            let show = |v: &[f32], f: isize| {
                if f < 0 {
                    return vec![];
                }
                v.get(f as usize * CHANNELS..(f as usize + 1) * CHANNELS)
                    .map(<[f32]>::to_vec)
                    .unwrap_or_default()
            };
            panic!(
                "reference frame {n} (live frame {l0}): the recording is neither a candidate, nor \
                 a transition, nor a device gap: live {:?}, candidates {:?}; {silent} silent \
                 frames follow",
                show(live, l0),
                candidates
                    .iter()
                    .map(|r| show(r, n as isize))
                    .collect::<Vec<_>>()
            );
        };
        w.inserted += silent + (-k).max(0) as usize;
        w.dropped += k.max(0) as usize;
        w.gaps_at.push(n);
        if j > 0 {
            w.transitions.push((n, j));
        }
        w.checked += j;
        offset = o;
        current = c;
        n = (n as isize + k + j as isize) as usize;
    }
    w.last_candidate = current;
    w.last_offset = offset;
    w
}

/// Device-path gaps the walk found, against what the service counted: the engine's own under-
/// and overruns (samples), and the stream errors the devices reported. Frames lost inside the
/// sound server or the device (an xrun the engine never sees as a full or empty ring) show up
/// only as stream errors, each of which can account for at most one device period.
#[derive(Debug)]
pub struct GapBudget {
    pub inserted: usize,
    pub dropped: usize,
    pub underrun_samples: usize,
    pub overrun_samples: usize,
    pub stream_errors: usize,
    pub period_frames: usize,
}

impl GapBudget {
    /// Frames the walk found beyond the engine's counters.
    pub fn unexplained_by_engine(&self) -> usize {
        self.inserted
            .saturating_sub(self.underrun_samples / CHANNELS)
            + self.dropped.saturating_sub(self.overrun_samples / CHANNELS)
    }

    /// Panics unless every gap is the engine's counted under- or overrun, or within what the
    /// devices' reported errors can account for.
    pub fn assert_accounted(&self) {
        let beyond = self.unexplained_by_engine();
        eprintln!(
            "gaps beyond the engine's counters: {beyond} frames ({} device error(s) reported)",
            self.stream_errors
        );
        assert!(
            beyond <= self.stream_errors * self.period_frames,
            "{beyond} frames lost or inserted beyond the engine's counters, and only {} device \
             error(s) reported: {self:?}",
            self.stream_errors
        );
    }
}

/// Frames of `live[from..to]` that are silent on every channel.
pub fn silent_frames(live: &[f32], from: usize, to: usize) -> usize {
    live.chunks_exact(CHANNELS)
        .take(to)
        .skip(from)
        .filter(|f| f.iter().all(|&v| v == 0.0))
        .count()
}

/// Resident memory of a process (kB), from /proc.
pub fn rss_kb(pid: u32) -> Option<u64> {
    let status = std::fs::read_to_string(format!("/proc/{pid}/status")).ok()?;
    status
        .lines()
        .find_map(|l| l.strip_prefix("VmRSS:"))
        .and_then(|v| v.trim().trim_end_matches("kB").trim().parse().ok())
}

/// CPU time a process has used (user + system), in clock ticks, from /proc.
pub fn cpu_ticks(pid: u32) -> Option<u64> {
    let stat = std::fs::read_to_string(format!("/proc/{pid}/stat")).ok()?;
    let after = &stat[stat.rfind(')')? + 2..];
    let fields: Vec<&str> = after.split_whitespace().collect();
    Some(fields.get(11)?.parse::<u64>().ok()? + fields.get(12)?.parse::<u64>().ok()?)
}
