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

/// The live frame that holds reference frame `n` when the recording is aligned at `offset`
/// (live = n + offset; negative when the device path lost input frames before the recording
/// began), or `None` when that frame comes before the recording.
pub fn live_index(offset: isize, n: usize) -> Option<usize> {
    usize::try_from(n as isize + offset).ok()
}

/// `run` live frames from `l` equal the reference from `n`.
fn runs_from(live: &[f32], l: usize, reference: &[f32], n: usize, run: usize) -> bool {
    l + run <= live.len() / CHANNELS
        && n + run <= reference.len() / CHANNELS
        && (0..run).all(|k| frame_matches(live, l + k, reference, n + k))
}

impl Gaps {
    /// Every gap found is one the engine counted: silence inserted within its underruns,
    /// frames dropped within its overruns (both counted in samples).
    pub fn assert_counted(&self, end: &serde_json::Value) {
        assert!(
            self.inserted * CHANNELS <= super::u(end, "/engine/output_underruns") as usize,
            "{} silent frames in the recording, more than the underruns counted",
            self.inserted
        );
        assert!(
            self.dropped * CHANNELS <= super::u(end, "/engine/input_overruns") as usize,
            "{} frames missing from the recording, more than the overruns counted",
            self.dropped
        );
    }
}

/// The alignment at which `run` reference frames from `probe` first appear in the recording.
pub fn align(live: &[f32], reference: &[f32], probe: usize, run: usize) -> Option<isize> {
    (0..live.len() / CHANNELS)
        .find(|&l| runs_from(live, l, reference, probe, run))
        .map(|l| l as isize - probe as isize)
}

/// The alignment nearest `near` (unchanged, then later, then earlier, up to [`SEARCH_FRAMES`])
/// at which `run` reference frames from `from` appear: after a swap, found again.
pub fn realign(
    live: &[f32],
    reference: &[f32],
    from: usize,
    near: isize,
    run: usize,
) -> Option<isize> {
    (0..=SEARCH_FRAMES as isize)
        .flat_map(|k| [near + k, near - k])
        .find(|&o| live_index(o, from).is_some_and(|l| runs_from(live, l, reference, from, run)))
}

/// Adds the step from alignment `before` to `after` to the gaps: a later alignment is silence
/// inserted, an earlier one frames dropped.
pub fn count_step(gaps: &mut Gaps, before: isize, after: isize) {
    if after > before {
        gaps.inserted += (after - before) as usize;
    } else {
        gaps.dropped += (before - after) as usize;
    }
}

/// Checks live frames `n + offset` against `reference` frame n for n in from..to, following
/// counted gaps; returns the alignment at the end.
pub fn walk(
    live: &[f32],
    mut offset: isize,
    from: usize,
    to: usize,
    reference: &[f32],
    what: &str,
    gaps: &mut Gaps,
) -> isize {
    let live_frames = live.len() / CHANNELS;
    let silent = |l: usize| (0..CHANNELS).all(|c| live[l * CHANNELS + c] == 0.0);
    let mut n = from;
    while n < to {
        let l = live_index(offset, n)
            .unwrap_or_else(|| panic!("frame {n} of {what} comes before the recording begins"));
        assert!(l < live_frames, "the recording ends at frame {n} of {what}");
        if frame_matches(live, l, reference, n) {
            n += 1;
            continue;
        }
        // Silence the playback side inserted, then possibly frames the capture side dropped
        // while playback was stalled.
        let gap = (0..SEARCH_FRAMES)
            .take_while(|&k| l + k < live_frames && silent(l + k))
            .count();
        // Frames dropped by the capture side never reach the recording: after the silence the
        // output resumes with reference frame n + skip.
        let Some(skip) =
            (0..SEARCH_FRAMES).find(|&k| runs_from(live, l + gap, reference, n + k, 8))
        else {
            let show = |v: &[f32], f: usize| v[f * CHANNELS..(f + 1) * CHANNELS].to_vec();
            panic!(
                "frame {n}: the recording is neither {what} nor a counted gap (live frame {l}: \
                 {:?}, next {:?}; expected {:?}, next {:?}; {gap} silent frames follow)",
                show(live, l),
                show(live, l + 1),
                show(reference, n),
                show(reference, n + 1)
            );
        };
        gaps.inserted += gap;
        gaps.dropped += skip;
        gaps.at.push(n);
        offset += gap as isize - skip as isize;
        n += skip;
    }
    offset
}
