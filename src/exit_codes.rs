//! Exit codes, and the block of them each command's `--help` ends with (only the codes that
//! command can give). The README's table says the same.

/// The command did what was asked.
pub const OK: u8 = 0;
/// Something outside the config went wrong: a file could not be read or written, a WAV file
/// was unusable, a comparison could not be made, the audio devices failed, no service answered.
pub const FAILED: u8 = 1;
/// The command line or the config is invalid, or the config could not be read (clap uses 2
/// for argument errors too).
pub const INVALID: u8 = 2;
/// The config is valid, but some path has no runnable inverse (or, for `distort` and
/// `simulate-recording`, some path's channel cannot run).
pub const NOT_RUNNABLE: u8 = 3;

macro_rules! invalid {
    () => {
        "  2    the command line is invalid, or the config is invalid or could not be read\n"
    };
}
macro_rules! not_runnable {
    () => {
        "  3    the config is valid, but some path has no runnable inverse\n"
    };
}
macro_rules! files {
    () => {
        "  1    a file could not be read or written, or a WAV file was unusable\n"
    };
}

/// Every code, for `redress --help`.
pub const ALL: &str = concat!(
    "Exit codes (each command's --help lists the ones it gives):\n",
    "  0    done\n",
    "  1    a file could not be read or written, a WAV file was unusable, the audio devices \
     failed, or no service answered\n",
    invalid!(),
    not_runnable!(),
    "  130  run: a second SIGTERM/SIGINT while the output fades out stops at once\n",
    "A closed output pipe (`redress demo | head -1`) ends a command quietly, as it does any \
     Unix tool."
);

pub const CHECK: &str = concat!(
    "Exit codes:\n",
    "  0    every path has an inverse ready to run\n",
    "  1    the pictures (--plot) could not be written\n",
    invalid!(),
    not_runnable!()
);

pub const APPLY: &str = concat!(
    "Exit codes:\n",
    "  0    done\n",
    files!(),
    invalid!(),
    not_runnable!()
);

pub const DISTORT: &str = concat!(
    "Exit codes:\n",
    "  0    done\n",
    files!(),
    invalid!(),
    "  3    the config is valid, but some path's channel cannot run (it is unstable)\n"
);

pub const COMPARE: &str = concat!(
    "Exit codes:\n",
    "  0    done\n",
    "  1    a file could not be read, the two files cannot be compared (channels, rate), or\n",
    "       --find-delay found no clear correlation peak\n",
    "  2    the command line is invalid\n"
);

pub const DEMO: &str = concat!(
    "Exit codes:\n",
    "  0    done\n",
    "  1    the demo could not run the link's own channel (it is unstable)\n",
    invalid!(),
    not_runnable!()
);

pub const RUN: &str = concat!(
    "Exit codes:\n",
    "  0    stopped by SIGTERM/SIGINT (after fading out) or at the end of --for\n",
    "  1    the audio devices could not be opened, the status socket could not be set up (or \
     another service answers on it), the --metrics-file cannot be written, or --true-link does \
     not match the config\n",
    invalid!(),
    not_runnable!(),
    "  130  a second SIGTERM/SIGINT while the output fades out: stopped at once\n"
);

pub const STATUS: &str = concat!(
    "Exit codes:\n",
    "  0    done\n",
    "  1    no service answered on the socket\n",
    "  2    the command line is invalid\n"
);

pub const DEVICES: &str = concat!(
    "Exit codes:\n",
    "  0    done\n",
    "  1    the audio system could not be asked\n"
);

pub const BENCH: &str = concat!(
    "Exit codes:\n",
    "  0    done\n",
    "  1    --round-trip: the devices failed, or the test signal did not come back\n",
    invalid!(),
    not_runnable!()
);

pub const STIMULUS: &str = concat!(
    "Exit codes:\n",
    "  0    done\n",
    "  1    a file could not be written\n",
    "  2    the command line or a stimulus setting is invalid\n"
);

pub const SIMULATE_RECORDING: &str = concat!(
    "Exit codes:\n",
    "  0    done\n",
    files!(),
    invalid!(),
    "  3    the config is valid, but some path's channel cannot run (it is unstable)\n"
);

pub const IDENTIFY: &str = concat!(
    "Exit codes:\n",
    "  0    done\n",
    "  1    a file could not be read or written, or the recording cannot be measured against \
     the stimulus\n",
    "  2    the command line or a model setting is invalid\n",
    "  3    the measurement gives no model fit to equalize with (no runnable inverse, no band \
     over 20 dB SNR, or an inverse that would make a noisy measurement worse); none is written\n"
);

pub const PLOT: &str = concat!(
    "Exit codes:\n",
    "  0    done\n",
    "  1    the pictures could not be written\n",
    invalid!()
);
