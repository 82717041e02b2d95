//! Comparing a live recording with the offline result, stretch by stretch: the frames must be
//! the offline result at one alignment, or gaps the device path counted (silence inserted,
//! frames dropped).

use redress::engine::Equalizer;
use redress::model::config::parse_link;
use redress::pipeline::plan_link;

/// The test links are stereo.
pub const CHANNELS: usize = 2;
/// Both paths compute the same f64 recursion and round once to f32 (see service_file_device).
pub const TOLERANCE: f32 = 1e-6;

/// The link's filters run offline over the whole of `input` (interleaved).
pub fn offline(config: &str, input: &[f32]) -> Vec<f32> {
    let link = parse_link(config, None).unwrap();
    let mut eq = Equalizer::from_plan(&plan_link(&link), 0).unwrap();
    let mut out = vec![0.0; input.len()];
    eq.process_interleaved(input, &mut out);
    out
}

/// Live frame `l` equals reference frame `r` within [`TOLERANCE`].
pub fn frame_matches(live: &[f32], l: usize, reference: &[f32], r: usize) -> bool {
    (0..CHANNELS).all(|c| (live[l * CHANNELS + c] - reference[r * CHANNELS + c]).abs() <= TOLERANCE)
}

/// Longest gap followed when the recording leaves the reference (one second).
pub const SEARCH_FRAMES: usize = 48_000;

/// Frames the device path added (silence) or lost, as found in the recording.
#[derive(Default)]
pub struct Gaps {
    pub inserted: usize,
    pub dropped: usize,
    /// Reference frames at which a gap was found.
    pub at: Vec<usize>,
}

/// Checks live frames `offset + n` against `reference` frame n for n in from..to, following
/// counted gaps; returns the alignment at the end.
pub fn walk(
    live: &[f32],
    mut offset: usize,
    from: usize,
    to: usize,
    reference: &[f32],
    what: &str,
    gaps: &mut Gaps,
) -> usize {
    let live_frames = live.len() / CHANNELS;
    let silent = |l: usize| (0..CHANNELS).all(|c| live[l * CHANNELS + c] == 0.0);
    let resumes = |o: usize, n: usize| {
        o + n + 8 <= live_frames && (0..8).all(|k| frame_matches(live, o + n + k, reference, n + k))
    };
    let mut n = from;
    while n < to {
        assert!(
            offset + n < live_frames,
            "the recording ends at frame {n} of {what}"
        );
        if frame_matches(live, offset + n, reference, n) {
            n += 1;
            continue;
        }
        // Silence the playback side inserted, then possibly frames the capture side dropped
        // while playback was stalled.
        let gap = (0..SEARCH_FRAMES)
            .take_while(|&k| offset + n + k < live_frames && silent(offset + n + k))
            .count();
        // Frames dropped by the capture side never reach the recording: after the silence the
        // output resumes with reference frame n + skip.
        let Some(skip) =
            (0..SEARCH_FRAMES.min(offset + gap + 1)).find(|&k| resumes(offset + gap - k, n + k))
        else {
            let show = |v: &[f32], f: usize| v[f * CHANNELS..(f + 1) * CHANNELS].to_vec();
            panic!(
                "frame {n}: the recording is neither {what} nor a counted gap (live frame {}: \
                 {:?}, next {:?}; expected {:?}, next {:?}; {gap} silent frames follow)",
                offset + n,
                show(live, offset + n),
                show(live, offset + n + 1),
                show(reference, n),
                show(reference, n + 1)
            );
        };
        gaps.inserted += gap;
        gaps.dropped += skip;
        gaps.at.push(n);
        offset = offset + gap - skip;
        n += skip;
    }
    offset
}
