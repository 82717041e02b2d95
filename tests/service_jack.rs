//! End to end on the JACK host: a private `jackd` with its dummy driver (real-time paced by the
//! server's own timer, no sound card), the service as one JACK client, and two test clients: one
//! feeds known programme into the service's input ports, the other records its output ports.
//! Ignored by default: scripts/test.sh runs it (`cargo test --test service_jack -- --ignored`)
//! once `jackd` (Debian jackd2) is installed.
//!
//! The service runs about five seconds; in the middle it gets a SIGHUP with a re-measured link
//! (it must swap to it), then the server's block size changes from 256 to 512 frames, then
//! SIGTERM (exit 0). On JACK the engine runs in the process callback
//! that hands it both buffers, so there is no ring: the recording must equal the offline result
//! of the first filter up to the reload and of the second after it, frame for frame at one
//! constant alignment, with no gap at all unless the server counted an xrun.

mod service_support;

use std::path::Path;
use std::process::{Child, Command, Stdio};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;
use std::time::{Duration, Instant};

use jack::contrib::ClosureProcessHandler;
use jack::{AudioIn, AudioOut, Client, ClientOptions, Control};
use redress::io::{generate, ProgrammeSpec};
use ringbuf::traits::{Consumer, Producer, Split};
use ringbuf::HeapRb;
use service_support::recording::write_raw;
use service_support::settled::{frame_matches, offline, CHANNELS, SEARCH_FRAMES, TOLERANCE};
use service_support::{frames_at_least, start, temp_dir, u, LINK_A, LINK_B};

const RATE: f64 = 48_000.0;
/// The dummy driver's block size (frames).
const BLOCK: u32 = 256;

/// A private `jackd` (dummy driver, no real-time) under its own server name; stopped by PID.
struct PrivateJack {
    child: Child,
    name: String,
}

impl PrivateJack {
    fn start(dir: &Path) -> Self {
        let name = format!("redress-test-{}", std::process::id());
        let log = std::fs::File::create(dir.join("jackd.log")).expect("jackd log");
        let child = Command::new("jackd")
            .env("JACK_DEFAULT_SERVER", &name)
            .env("JACK_NO_AUDIO_RESERVATION", "1")
            .args(["--no-realtime", "-d", "dummy", "-r", "48000", "-p"])
            .arg(BLOCK.to_string())
            .stdin(Stdio::null())
            .stdout(log.try_clone().expect("jackd log"))
            .stderr(log)
            .spawn()
            .expect("jackd starts (Debian package jackd2)");
        let server = Self { child, name };
        // Clients of this process find the server by this name (one test in this file).
        std::env::set_var("JACK_DEFAULT_SERVER", &server.name);
        let started = Instant::now();
        loop {
            if let Ok((c, _)) = Client::new("redress-probe", ClientOptions::NO_START_SERVER) {
                drop(c);
                return server;
            }
            assert!(
                started.elapsed() < Duration::from_secs(20),
                "jackd did not come up: {}",
                std::fs::read_to_string(dir.join("jackd.log")).unwrap_or_default()
            );
            std::thread::sleep(Duration::from_millis(100));
        }
    }
}

impl Drop for PrivateJack {
    fn drop(&mut self) {
        let _ = Command::new("kill")
            .arg("-TERM")
            .arg(self.child.id().to_string())
            .status();
        let started = Instant::now();
        while self.child.try_wait().ok().flatten().is_none() {
            if started.elapsed() > Duration::from_secs(5) {
                let _ = self.child.kill();
                let _ = self.child.wait();
                return;
            }
            std::thread::sleep(Duration::from_millis(20));
        }
    }
}

// Source: common practice for live audio services — the live result equals the offline one,
// and a reload swaps filters without losing or repeating a frame.
#[test]
#[ignore = "needs jackd (Debian jackd2); scripts/test.sh runs it"]
fn jack_host_matches_offline_through_a_reload() {
    let dir = temp_dir("svc-jack");
    let jack = PrivateJack::start(&dir);

    // The feeding client: silence until `go`, then the programme, then silence.
    let mut input = generate(&ProgrammeSpec::new(RATE, CHANNELS, 8.0, 11));
    input.resize(input.len() + 2 * 48_000 * CHANNELS, 0.0);
    let go = Arc::new(AtomicBool::new(false));
    let (feed, _) = Client::new("feed", ClientOptions::NO_START_SERVER).expect("feed client");
    let mut feed_ports: Vec<_> = (1..=CHANNELS)
        .map(|c| {
            feed.register_port(&format!("out_{c}"), AudioOut::default())
                .unwrap()
        })
        .collect();
    let programme = input.clone();
    let feeding = Arc::clone(&go);
    let mut at = 0usize;
    let feed = feed
        .activate_async(
            (),
            ClosureProcessHandler::new(move |_: &Client, ps: &jack::ProcessScope| {
                let n = ps.n_frames() as usize;
                let started = feeding.load(Ordering::Acquire);
                for (c, port) in feed_ports.iter_mut().enumerate() {
                    for (k, out) in port.as_mut_slice(ps).iter_mut().enumerate() {
                        let i = (at + k) * CHANNELS + c;
                        *out = if started {
                            programme.get(i).copied().unwrap_or(0.0)
                        } else {
                            0.0
                        };
                    }
                }
                if started {
                    at += n;
                }
                Control::Continue
            }),
        )
        .expect("feed activates");

    // The recording client: everything that reaches its inputs, interleaved, from before the
    // service starts (so a block lost later moves the alignment without it going negative).
    let (tap, _) = Client::new("tap", ClientOptions::NO_START_SERVER).expect("tap client");
    let tap_ports: Vec<_> = (1..=CHANNELS)
        .map(|c| {
            tap.register_port(&format!("in_{c}"), AudioIn::default())
                .unwrap()
        })
        .collect();
    let (mut recorded, mut recording) = HeapRb::<f32>::new(60 * 48_000 * CHANNELS).split();
    let tap = tap
        .activate_async(
            (),
            ClosureProcessHandler::new(move |_: &Client, ps: &jack::ProcessScope| {
                let (left, right) = (tap_ports[0].as_slice(ps), tap_ports[1].as_slice(ps));
                for (l, r) in left.iter().zip(right) {
                    let _ = recorded.try_push(*l);
                    let _ = recorded.try_push(*r);
                }
                Control::Continue
            }),
        )
        .expect("tap activates");

    let audio = "\n[audio]\nhost = \"jack\"\nlock_memory = false\n\
                 connect_inputs = [\"feed:out_1\", \"feed:out_2\"]\n\
                 connect_outputs = [\"tap:in_1\", \"tap:in_2\"]\n";
    let config = dir.join("link.toml");
    std::fs::write(&config, format!("{LINK_A}{audio}")).unwrap();
    let server = jack.name.clone();
    let mut svc = start(
        &dir,
        &config,
        &[],
        &[("JACK_DEFAULT_SERVER", Path::new(&server))],
    );
    let first = svc.wait_ready();
    assert_eq!(
        first.pointer("/audio/host").and_then(|v| v.as_str()),
        Some("jack")
    );
    assert_eq!(
        first.pointer("/audio/runs_as").and_then(|v| v.as_str()),
        Some("one_callback"),
        "{first}"
    );
    assert_eq!(u(&first, "/audio/block_frames"), u64::from(BLOCK));
    eprintln!(
        "service: {}\nrealtime: {}",
        first["audio"]["description"], first["audio"]["realtime"]
    );
    // Past the fade-in before the programme starts, so the comparison needs no exception for it.
    let settled = svc.wait_for("0.2 s of silence", frames_at_least(9_600));
    let start_frame = u(&settled, "/engine/frames");
    let xruns_before = u(&settled, "/audio/stream_errors");
    go.store(true, Ordering::Release);

    let before = svc.wait_for("1.5 s of programme", frames_at_least(start_frame + 72_000));
    let hup_frame = u(&before, "/engine/frames");
    let swapped = svc.reload_to_generation(&config, &format!("{LINK_B}{audio}"), 2);
    assert_eq!(
        u(&swapped, "/audio/restarts"),
        0,
        "the reload restarted the client"
    );
    let swap_frame = u(&swapped, "/engine/frames");
    // The server changes its block size while the service runs (as a graph host may): the
    // engine goes on with the new size, and the audio stays exact through it.
    svc.wait_for("0.5 s after the swap", frames_at_least(swap_frame + 24_000));
    feed.as_client()
        .set_buffer_size(2 * BLOCK)
        .expect("the server takes a new block size");
    let resized = svc.wait_for("the new block size in status", |d| {
        d.pointer("/audio/block_frames").and_then(|v| v.as_u64()) == Some(u64::from(2 * BLOCK))
    });
    let resize_frame = u(&resized, "/engine/frames");
    let end = svc.wait_for(
        "1 s after the block size changed",
        frames_at_least(resize_frame + 48_000),
    );
    let end_frame = u(&end, "/engine/frames");
    go.store(false, Ordering::Release);
    svc.signal("TERM");
    assert_eq!(svc.wait_exit().code(), Some(0), "{}", svc.log_text());
    drop(feed);
    drop(tap);

    // The same server at another rate than the design: refused, both rates named.
    let other_rate = LINK_A
        .replace("sample_rate_hz = 48000", "sample_rate_hz = 44100")
        .replace("[0, 24000]", "[0, 22050]");
    let wrong = dir.join("rate.toml");
    std::fs::write(&wrong, format!("{other_rate}{audio}")).unwrap();
    let mut refused = start(
        &dir,
        &wrong,
        &[],
        &[("JACK_DEFAULT_SERVER", Path::new(&server))],
    );
    assert_ne!(refused.wait_exit().code(), Some(0));
    let told = refused.log_text();
    assert!(
        told.contains("runs at 48000 Hz") && told.contains("designed for 44100 Hz"),
        "{told}"
    );
    // Xruns the server reported to the service while the programme played.
    let xruns = u(&end, "/audio/stream_errors") - xruns_before;

    let live: Vec<f32> = std::iter::from_fn(|| recording.try_pop()).collect();
    let live_frames = live.len() / CHANNELS;
    // Kept with the scratch directory when the test fails, for a look.
    write_raw(&dir.join("tap.raw"), &live);
    let expected_a = offline(LINK_A, &input);
    let expected_b = offline(LINK_B, &input);
    write_raw(&dir.join("expected_a.raw"), &expected_a);
    write_raw(&dir.join("expected_b.raw"), &expected_b);
    // Relative to the programme's start: where the reload and the swap fell in it.
    let to_programme = |engine_frame: u64| (engine_frame - start_frame) as usize;

    // Align once, 0.1 s into the programme; then walk.
    let probe = 4_800;
    assert!(
        expected_a[probe * CHANNELS..(probe + RUN) * CHANNELS]
            .iter()
            .any(|&x| x.abs() > 0.01),
        "the probe must fall on sound, not silence"
    );
    let offset = (0..live_frames.saturating_sub(RUN))
        .find(|&l| (0..RUN).all(|k| frame_matches(&live, l + k, &expected_a, probe + k)))
        .expect("the equalized programme appears in the recording")
        - probe;
    let mut breaks = Vec::new();
    let until = to_programme(hup_frame);
    let (offset, compared_a) = follow(
        &live,
        offset,
        probe,
        until,
        &expected_a,
        "the first filter's result",
        &mut breaks,
    );
    // After the swap and its crossfade (20 ms) and warm-up: the second filter, at the same
    // alignment when nothing was lost.
    let after_from = to_programme(swap_frame) + 4_800;
    let after_to = to_programme(end_frame) - 9_600;
    assert!(
        after_to > after_from + 24_000,
        "too little audio after the swap"
    );
    // Nearest alignment first; a few blocks later if the swap's first frames fall on a break.
    let b_at = |o: usize, n: usize| {
        o + n + RUN <= live_frames
            && (0..RUN).all(|k| frame_matches(&live, o + n + k, &expected_b, n + k))
    };
    let (after_from, realigned) = (after_from..after_from + 4_096)
        .step_by(16)
        .find_map(|n| {
            (0..=SEARCH_FRAMES)
                .flat_map(|k| [Some(offset + k), offset.checked_sub(k)])
                .flatten()
                .find(|&o| b_at(o, n))
                .map(|o| (n, o))
        })
        .expect("the second filter's result appears after the swap");
    let shift = realigned.abs_diff(offset);
    let (_, compared_b) = follow(
        &live,
        realigned,
        after_from,
        after_to,
        &expected_b,
        "the second filter's result",
        &mut breaks,
    );
    eprintln!(
        "jack run: {} frames ({} channels) equal to the offline result within {TOLERANCE} \
         ({compared_a} before the reload, {compared_b} after, through the block size's change \
         from {BLOCK} to {} frames at programme frame {}); alignment shift at the swap \
         {shift}; breaks {:?}; xruns the server reported {xruns}",
        compared_a + compared_b,
        CHANNELS,
        2 * BLOCK,
        to_programme(resize_frame),
        breaks
    );
    let f = |p: &str| end.pointer(p).and_then(|v| v.as_f64()).unwrap_or(f64::NAN);
    eprintln!(
        "engine time per callback: p50 {:.1} us, p99 {:.1} us, max {:.1} us of a {:.0} us block",
        f("/engine/callback_p50_us"),
        f("/engine/callback_p99_us"),
        f("/engine/callback_max_us"),
        f("/audio/block_period_us")
    );
    // No ring and one clock: nothing can be lost or repeated unless the server says so (a late
    // cycle in the dummy driver's non-real-time mode usually costs nothing: the server still
    // runs every client of the cycle, late), and each xrun costs at most one break.
    let events = breaks.len() as u64 + u64::from(shift != 0);
    assert!(
        events <= xruns,
        "{events} break(s) in the recording (shift at the swap {shift}, {breaks:?}) but only \
         {xruns} xrun(s) counted"
    );
    assert!(
        compared_a + compared_b > 120_000,
        "too few frames compared: {compared_a} + {compared_b}"
    );
}

/// Frames that must match for an alignment to count as found.
const RUN: usize = 32;
/// Frames after a break that may differ while the filter's state settles (the test links' pole
/// at 0.3 leaves less than 1e-6 of a disturbance after about 12 samples; 64 is ample).
const SETTLE_FRAMES: usize = 64;

/// Where the recording left the reference: at which reference frame, the alignment before
/// (live frame minus reference frame) and after, and how many live frames after the break
/// differ while the filter's state settles.
#[derive(Debug)]
#[allow(dead_code)] // read through Debug in the messages
struct Break {
    at: usize,
    from: isize,
    to: isize,
    settled_after: usize,
}

/// Checks live frames `offset + n` against `reference` frame n for n in from..to. On a graph
/// host a late cycle may lose or repeat a whole block somewhere in the graph (not insert
/// silence, as a ring does): when the recording leaves the reference, the live frames just
/// after are looked up in the reference (within [`SEARCH_FRAMES`] either way, nearest first,
/// allowing [`SETTLE_FRAMES`] for the filter's state to settle), that alignment is followed
/// and the break noted. Returns the alignment at the end and the frames found equal.
fn follow(
    live: &[f32],
    offset: usize,
    from: usize,
    to: usize,
    reference: &[f32],
    what: &str,
    breaks: &mut Vec<Break>,
) -> (usize, usize) {
    let live_frames = live.len() / CHANNELS;
    let reference_frames = reference.len() / CHANNELS;
    let run_at = |l: usize, r: usize| {
        l + RUN <= live_frames
            && r + RUN <= reference_frames
            && (0..RUN).all(|k| frame_matches(live, l + k, reference, r + k))
    };
    let mut offset = offset as isize;
    let mut n = from;
    let mut equal = 0;
    while n < to {
        let l = (offset + n as isize) as usize;
        assert!(l < live_frames, "the recording ends at frame {n} of {what}");
        if frame_matches(live, l, reference, n) {
            n += 1;
            equal += 1;
            continue;
        }
        let found = (0..SETTLE_FRAMES).find_map(|s| {
            (0..=SEARCH_FRAMES)
                .flat_map(|k| [Some(n + k), n.checked_sub(k)])
                .flatten()
                .find(|&r| run_at(l + s, r))
                .map(|r| (s, r))
        });
        let Some((settled_after, r)) = found else {
            panic!(
                "frame {n}: the recording leaves {what} and does not pick it up again (live \
                 frame {l}: {:?}, expected {:?})",
                &live[l * CHANNELS..(l + 1) * CHANNELS],
                &reference[n * CHANNELS..(n + 1) * CHANNELS]
            );
        };
        let to_offset = (l + settled_after) as isize - r as isize;
        breaks.push(Break {
            at: n,
            from: offset,
            to: to_offset,
            settled_after,
        });
        offset = to_offset;
        n = r;
    }
    (
        usize::try_from(offset).expect("the alignment stays within the recording"),
        equal,
    )
}

// Source: common practice — a host that cannot be reached is a clear error naming what is
// missing, never a panic or a hang. Runs everywhere: with libjack installed (scripts/test.sh
// installs it) the server is what is missing; without it, the library.
#[test]
fn an_unreachable_jack_server_is_named_in_the_error() {
    let dir = temp_dir("svc-jack-absent");
    let config = dir.join("link.toml");
    std::fs::write(
        &config,
        format!("{LINK_A}\n[audio]\nhost = \"jack\"\nlock_memory = false\n"),
    )
    .unwrap();
    let server = format!("redress-absent-{}", std::process::id());
    let mut svc = start(
        &dir,
        &config,
        &[],
        &[("JACK_DEFAULT_SERVER", Path::new(&server))],
    );
    let status = svc.wait_exit();
    let told = svc.log_text();
    assert_ne!(status.code(), Some(0), "{told}");
    assert!(!told.contains("panicked"), "{told}");
    let named = told.contains(&format!(
        "audio host `jack`: its server is not running (no JACK server named `{server}` answers"
    )) || told.contains("audio host `jack`: its client library is not installed");
    assert!(named, "{told}");
    assert!(told.contains("help: "), "{told}");
}
