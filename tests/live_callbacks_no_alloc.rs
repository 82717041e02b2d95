//! The live callbacks' real code, called directly without a device: it allocates and frees
//! nothing (steady running, f32, i16 and 24-bit devices, buffers longer than the scratch, block
//! sizes changing mid-stream, a filter swap,
//! ring overruns and underruns), it counts what it drops and fills, and it delivers the
//! engine's output in order behind the silence prefill.

mod common;

use assert_no_alloc::{assert_no_alloc, reset_violation_count, violation_count, AllocDisabler};
use common::{echo_line, inverse_set, resonant_line, sine};
use redress::engine::{engine_pair, EngineSettings};
use redress::io::live::realtime::ThreadScheduling;
use redress::io::live::{
    duplex_sides, duplex_sides_two_clocks, DeviceSample, SchedulingRequest, TpdfDither,
    PREFILL_PERIODS, RING_PERIODS, TWO_CLOCK_TARGET_HALF_PERIODS,
};
use std::sync::atomic::Ordering;

#[global_allocator]
static ALLOCATOR: AllocDisabler = AllocDisabler;

const CHANNELS: usize = 2;
const PERIOD: usize = 256;

fn to_i16(x: &[f32]) -> Vec<i16> {
    x.iter().map(|v| i16::from_f32(*v)).collect()
}

// Source: common practice for real-time audio — no (de)allocation on the audio thread.
#[test]
fn callbacks_allocate_nothing_and_count_overruns_and_underruns() {
    let settings = EngineSettings::defaults(CHANNELS, 48_000.0);
    let (engine, mut control) = engine_pair(settings, Some(inverse_set(&echo_line(), CHANNELS, 1)));
    let stats = control.stats();
    let (mut capture, mut playback, plan) = duplex_sides(engine, stats.clone(), PERIOD);
    assert_eq!(plan.prefill_frames(), PREFILL_PERIODS * PERIOD);
    assert_eq!(plan.capacity_frames(), RING_PERIODS * PERIOD);

    let block = sine(PERIOD, CHANNELS, 440.0, 0.3, 0);
    let block_i16 = to_i16(&block);
    reset_violation_count();

    // The first callbacks ask for real-time scheduling (one system call each) and record what
    // they got, without allocating; on a thread of their own, so the test thread keeps its
    // schedule whatever the kernel grants.
    let asked = SchedulingRequest::Fifo(10);
    let capture_slot = capture.set_scheduling(asked);
    let playback_slot = playback.set_scheduling(asked);
    let first = block.clone();
    let mut first_out = vec![0.0f32; block.len()];
    let (mut capture, mut playback) = std::thread::spawn(move || {
        assert_no_alloc(|| {
            capture.on_input(&first);
            playback.on_output(&mut first_out);
        });
        (capture, playback)
    })
    .join()
    .unwrap();
    for slot in [&capture_slot, &playback_slot] {
        let got = ThreadScheduling::read("callback", asked, slot);
        assert!(got.policy.is_some(), "the first callback recorded nothing");
        assert!(got.real_time || got.refused.is_some(), "{got:?}");
    }
    // Longer than the scratch (one period), shorter than the prefill: the sides must cut it
    // into chunks, and the ring has room for it.
    let long = sine(PERIOD + 100, CHANNELS, 1000.0, 0.2, 0);
    let mut out = vec![0.0f32; block.len()];
    let mut out_i16 = vec![0i16; block.len()];
    let mut out_long = vec![0.0f32; long.len()];
    let overruns = || stats.input_overruns.load(Ordering::Relaxed);
    let underruns = || stats.output_underruns.load(Ordering::Relaxed);
    reset_violation_count();

    // Steady duplex, alternating, f32 then i16 devices: the ring stays at its prefill.
    for _ in 0..50 {
        assert_no_alloc(|| {
            capture.on_input(&block);
            playback.on_output(&mut out);
        });
    }
    // The playback side meters what it finds waiting: the prefill plus the period the capture
    // side has just pushed, every time (common practice: the fill a ring's reader sees).
    let ring = control.snapshot();
    let expected = (plan.prefill_frames() + PERIOD) as u64;
    assert_eq!(ring.ring_fill_frames, Some(expected));
    assert_eq!(
        (ring.ring_fill_low_frames, ring.ring_fill_high_frames),
        (Some(expected), Some(expected))
    );
    for _ in 0..50 {
        assert_no_alloc(|| {
            capture.on_input(&block_i16);
            playback.on_output(&mut out_i16);
        });
    }
    assert_eq!(
        (overruns(), underruns()),
        (0, 0),
        "steady running lost samples"
    );
    assert!(out.iter().any(|v| *v != 0.0) && out_i16.iter().any(|v| *v != 0));

    // A 24-bit device, and a host that changes its block size while running (a graph host
    // may): 64, 256, 17, 512, 1, … frames per callback, the same on both sides, alternating
    // f32 and 24-bit buffers. The engine goes on at each new size without allocating or
    // losing a frame (blocks past the scratch are cut into chunks).
    let block_i24: Vec<cpal::I24> = to_i16(&block)
        .iter()
        .map(|v| cpal::I24::from_f32(v.to_f32()))
        .collect();
    let mut out_i24 = vec![<cpal::I24 as DeviceSample>::SILENCE; block_i24.len()];
    let long_f32 = sine(2 * PERIOD, CHANNELS, 300.0, 0.2, 0);
    let mut out_long_f32 = vec![0.0f32; long_f32.len()];
    let long_i24: Vec<cpal::I24> = long_f32.iter().map(|v| cpal::I24::from_f32(*v)).collect();
    let mut out_long_i24 = vec![<cpal::I24 as DeviceSample>::SILENCE; long_i24.len()];
    for (i, frames) in [64, 256, 17, 512, 1, 128, 480, 256, 3, 512]
        .into_iter()
        .cycle()
        .take(40)
        .enumerate()
    {
        let n = frames * CHANNELS;
        assert_no_alloc(|| {
            if i % 2 == 0 {
                capture.on_input(&long_f32[..n]);
                playback.on_output(&mut out_long_f32[..n]);
            } else {
                capture.on_input(&long_i24[..n]);
                playback.on_output(&mut out_long_i24[..n]);
            }
        });
    }
    for _ in 0..4 {
        assert_no_alloc(|| {
            capture.on_input(&block_i24);
            playback.on_output(&mut out_i24);
        });
    }
    assert_eq!(
        (overruns(), underruns()),
        (0, 0),
        "a change of block size lost samples"
    );
    assert!(out_i24.iter().any(|v| v.inner() != 0));

    // A filter swap, sent from the control side outside the no-allocation zone.
    control
        .send(inverse_set(&resonant_line(), CHANNELS, 2))
        .expect("inbox has room");
    for _ in 0..20 {
        assert_no_alloc(|| {
            capture.on_input(&block);
            playback.on_output(&mut out);
        });
    }
    assert_eq!(
        control.snapshot().swaps_completed,
        1,
        "the swap did not finish"
    );

    // Long buffers on both sides, in step: still nothing lost.
    for _ in 0..10 {
        assert_no_alloc(|| {
            capture.on_input(&long);
            playback.on_output(&mut out_long);
        });
    }
    assert_eq!((overruns(), underruns()), (0, 0));

    // The ring now holds exactly its prefill. Capture alone: two periods fill it, the next
    // eight are dropped whole.
    for _ in 0..10 {
        assert_no_alloc(|| capture.on_input(&block_i16));
    }
    assert_eq!(overruns(), (8 * PERIOD * CHANNELS) as u64);

    // Playback alone: four periods drain the full ring, the next three are silence.
    for _ in 0..7 {
        assert_no_alloc(|| playback.on_output(&mut out_i16));
    }
    assert_eq!(underruns(), (3 * PERIOD * CHANNELS) as u64);
    assert!(
        out_i16.iter().all(|v| *v == 0),
        "an underrun must play silence"
    );

    // A fade-out: the capture side notes where it ended, the playback side what it took out
    // of the ring and the delay its device reports, all without allocating. The fade has
    // played only once its last frame and the device's delay after it are out of the ring.
    let playout = capture.playout();
    control.request_fade_out();
    for _ in 0..2 {
        assert_no_alloc(|| capture.on_input(&block));
    }
    assert_no_alloc(|| playback.record_device_delay(std::time::Duration::from_millis(1), 48_000));
    assert_eq!(playout.device_delay(), 48);
    assert!(!playout.faded_out_through(48));
    let mut guard = 0;
    while !playout.faded_out_through(48) {
        assert_no_alloc(|| {
            capture.on_input(&block);
            playback.on_output(&mut out);
        });
        guard += 1;
        assert!(guard < 100, "the fade-out never played out");
    }
    assert!(control.fade_out_done());
    assert!(
        out.iter().all(|v| *v == 0.0),
        "after the fade has played, what follows it is silence"
    );

    assert_eq!(
        violation_count(),
        0,
        "the live callbacks allocated or freed memory"
    );

    // The detector itself works: one allocation inside the zone is counted.
    assert_no_alloc(|| drop(std::hint::black_box(Vec::<u8>::with_capacity(8))));
    assert!(violation_count() > 0, "the allocation detector saw nothing");
}

// Expected values: the same filter set run offline by `Equalizer::process_interleaved` from
// fresh state. Both run the same f64 recursion on the same f32 input and round once to f32, so
// they agree bit for bit; the one intended difference is the engine's fade-in, which with
// `fade_in_samples = 1` silences frame 0 only.
#[test]
fn sides_deliver_the_engine_output_in_order_behind_the_prefill() {
    for device_is_i16 in [false, true] {
        let mut settings = EngineSettings::defaults(CHANNELS, 48_000.0);
        settings.fade_in_samples = 1;
        let set = inverse_set(&resonant_line(), CHANNELS, 1);
        let mut offline = set.clone();
        let (engine, control) = engine_pair(settings, Some(set));
        let (mut capture, mut playback, plan) = duplex_sides(engine, control.stats(), PERIOD);

        // Irregular block sizes; playback takes each block back in two pieces of other sizes,
        // so the ring wanders around its prefill and never over- or underruns.
        let frames = 20 * PERIOD;
        let mut input = sine(frames, CHANNELS, 700.0, 0.25, 0);
        if device_is_i16 {
            // What an i16 device would deliver, as the engine sees it.
            input = to_i16(&input).iter().map(|v| v.to_f32()).collect();
        }
        let mut expected = vec![0.0f32; input.len()];
        offline.process_interleaved(&input, &mut expected);
        expected[..CHANNELS].fill(0.0);

        let mut played: Vec<f32> = Vec::new();
        let sizes = [100, 256, 37, 300, 256, 90];
        let mut at = 0;
        for (i, size) in sizes.iter().cycle().enumerate() {
            if at >= frames {
                break;
            }
            let n = (*size).min(frames - at);
            let chunk = &input[at * CHANNELS..(at + n) * CHANNELS];
            let first = sizes[(i + 3) % sizes.len()] % n;
            if device_is_i16 {
                capture.on_input(&to_i16(chunk));
                for piece in [first, n - first] {
                    let mut out = vec![0i16; piece * CHANNELS];
                    playback.on_output(&mut out);
                    played.extend(out.iter().map(|v| v.to_f32()));
                }
            } else {
                capture.on_input(chunk);
                for piece in [first, n - first] {
                    let mut out = vec![0.0f32; piece * CHANNELS];
                    playback.on_output(&mut out);
                    played.extend(out);
                }
            }
            at += n;
        }
        let snap = control.snapshot();
        assert_eq!((snap.input_overruns, snap.output_underruns), (0, 0));

        let prefill = plan.prefill_frames() * CHANNELS;
        assert!(played.len() > prefill + 1000);
        let mut heard = vec![0.0f32; prefill];
        heard.extend_from_slice(&expected[..played.len() - prefill]);
        if device_is_i16 {
            // The playback device quantizes the engine's output once more, with TPDF dither:
            // within 1.5 steps of the value (rounding's half step plus the dither's one; the
            // dither's own statistics are checked in `io::live::dither`), and exactly what one
            // dither value per played sample, in order, gives.
            let lsb = 1.0 / 32_768.0;
            for (got, want) in played.iter().zip(&heard) {
                assert!((got - want).abs() < 1.5 * lsb, "{got} against {want}");
            }
            let mut dither = TpdfDither::default();
            let want: Vec<f32> = heard
                .iter()
                .map(|v| i16::from_f32_dithered(*v, &mut dither).to_f32())
                .collect();
            assert_eq!(played, want, "i16 device");
        } else {
            assert!(
                played[..prefill].iter().all(|v| *v == 0.0),
                "prefill is silence"
            );
            assert_eq!(played, heard, "f32 device");
        }
    }
}

// Source: common practice for real-time audio — the two-clock path (drift loop and resampler,
// run on the playback thread) allocates nothing once built, also while its ratio moves.
#[test]
fn the_drift_loop_and_resampler_allocate_nothing() {
    use redress::io::live::drift::{DriftLoop, DriftResampler};
    let mut control = DriftLoop::new(640.0, 48_000.0);
    let mut resampler = DriftResampler::new(CHANNELS, PERIOD).unwrap();
    let input = sine(resampler.input_frames_max(), CHANNELS, 440.0, 0.3, 0);
    let mut out = vec![0.0f32; PERIOD * CHANNELS];
    // No reset: the other tests of this binary run beside this one and keep their own count.
    let before = violation_count();
    for i in 0..200 {
        assert_no_alloc(|| {
            let ratio = control.update(600.0 + f64::from(i % 80), PERIOD as f64 / 48_000.0);
            resampler.set_ratio(ratio);
            let need = resampler.input_frames_next() * CHANNELS;
            assert!(resampler.process(&input[..need], &mut out));
        });
    }
    assert_eq!(
        violation_count(),
        before,
        "the drift path allocated or freed"
    );
    assert!(out.iter().any(|v| *v != 0.0));
}

// Source: common practice for real-time audio — with two clocks the playback side reads the
// ring through the drift loop and its resampler: still nothing allocated, across block sizes
// that do not match the resampler's period, and the drift estimate is published for `status`.
#[test]
fn two_clock_sides_allocate_nothing_and_publish_the_drift() {
    let settings = EngineSettings::defaults(CHANNELS, 48_000.0);
    let (engine, control) = engine_pair(settings, Some(inverse_set(&echo_line(), CHANNELS, 1)));
    let (mut capture, mut playback, plan) =
        duplex_sides_two_clocks(engine, control.stats(), PERIOD, 48_000.0).unwrap();
    assert!(plan.two_clocks);
    assert_eq!(
        plan.prefill_frames(),
        TWO_CLOCK_TARGET_HALF_PERIODS * PERIOD / 2
    );
    let input = sine(PERIOD, CHANNELS, 440.0, 0.3, 0);
    let mut out = vec![0.0f32; PERIOD * CHANNELS];
    let mut odd = vec![0.0f32; 100 * CHANNELS];
    let before = violation_count();
    for i in 0..100 {
        assert_no_alloc(|| {
            capture.on_input(&input);
            if i % 3 == 0 {
                // 100 + 156 frames: two device calls for one period of the resampler.
                playback.on_output(&mut odd);
                playback.on_output(&mut out[..156 * CHANNELS]);
            } else {
                playback.on_output(&mut out);
            }
        });
    }
    assert_eq!(
        violation_count(),
        before,
        "the two-clock sides allocated or freed"
    );
    let snap = control.snapshot();
    assert_eq!((snap.input_overruns, snap.output_underruns), (0, 0));
    let ppm = snap.drift_ppm.expect("the drift estimate is published");
    assert!(
        ppm.abs() <= redress::io::live::drift::MAX_DRIFT_PPM,
        "{ppm}"
    );
    assert!(out.iter().any(|v| *v != 0.0));
}

// Source: common practice for real-time audio — no (de)allocation on the audio thread. The
// graph host's one-callback body (JACK's process callback runs exactly these calls per port),
// through blocks of changing size (longer ones split into chunks) and a filter swap.
#[test]
fn the_graph_hosts_one_callback_allocates_nothing() {
    use redress::io::live::graph_side::GraphSide;

    let settings = EngineSettings::defaults(CHANNELS, 48_000.0);
    let (engine, mut control) = engine_pair(settings, Some(inverse_set(&echo_line(), CHANNELS, 1)));
    let mut side = GraphSide::new(engine, PERIOD);
    let left: Vec<f32> = sine(3 * PERIOD, 1, 440.0, 0.3, 0);
    let right: Vec<f32> = sine(3 * PERIOD, 1, 660.0, 0.2, 0);
    let mut out = [vec![0.0f32; left.len()], vec![0.0f32; left.len()]];
    let cycle = |side: &mut GraphSide, frames: usize, out: &mut [Vec<f32>; 2]| {
        side.begin_cycle();
        let mut at = 0;
        while at < frames {
            let len = (frames - at).min(side.chunk_frames());
            side.put_input(0, &left[at..at + len]);
            side.put_input(1, &right[at..at + len]);
            side.run(len);
            let [l, r] = out;
            side.take_output(0, &mut l[at..at + len]);
            side.take_output(1, &mut r[at..at + len]);
            at += len;
        }
    };
    // The first call records the thread's schedule (the server's business: nothing asked).
    cycle(&mut side, PERIOD, &mut out);
    reset_violation_count();
    for &frames in [PERIOD, 64, 3 * PERIOD, 17, PERIOD]
        .iter()
        .cycle()
        .take(100)
    {
        assert_no_alloc(|| cycle(&mut side, frames, &mut out));
    }
    assert!(control
        .send(inverse_set(&resonant_line(), CHANNELS, 2))
        .is_ok());
    for &frames in [PERIOD, 3 * PERIOD, 32].iter().cycle().take(200) {
        assert_no_alloc(|| cycle(&mut side, frames, &mut out));
    }
    assert_eq!(violation_count(), 0, "the one-callback body allocated");
    assert_eq!(
        control.snapshot().swaps_completed,
        1,
        "the swap ran through"
    );
    assert!(
        out[0].iter().any(|&y| y.abs() > 0.01),
        "the engine's output reached the output buffers"
    );
}
