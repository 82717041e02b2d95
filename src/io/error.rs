use std::fmt;
use std::path::{Path, PathBuf};

use crate::os_error::plain_os_error;

/// Everything that can go wrong reading, writing or comparing audio files.
///
/// Every variant carries the file it concerns, and its `Display` ends with what to do about it,
/// so the command-line shell can print it unchanged.
#[derive(Debug)]
pub enum IoError {
    /// The file does not exist (or a folder on its path does not).
    NotFound { file: PathBuf },
    /// The operating system refused or failed the read or write.
    Access {
        file: PathBuf,
        source: std::io::Error,
    },
    /// The file is not a RIFF/WAVE file at all.
    NotWav { file: PathBuf, detail: String },
    /// A WAV file whose sample format we do not read or write (8-bit, 64-bit float, compressed…).
    UnsupportedFormat { file: PathBuf, detail: String },
    /// The file's header or data are damaged.
    Malformed { file: PathBuf, detail: String },
    /// The file's channel count does not match the link's.
    ChannelMismatch {
        file: PathBuf,
        found: usize,
        expected: usize,
    },
    /// The file's sample rate does not match the one the other input or the link uses.
    SampleRateMismatch {
        file: PathBuf,
        found: u32,
        expected: u32,
    },
    /// Two files to compare differ in channel count or sample rate.
    NotComparable {
        file: PathBuf,
        reference: PathBuf,
        /// "channel" or "Hz": what `found` and `expected` count.
        unit: &'static str,
        found: u32,
        expected: u32,
    },
    /// The output names the input file itself: writing it would destroy the input mid-read.
    OutputIsInput { file: PathBuf },
    /// The output exists and the command was not asked to replace it.
    OutputExists { file: PathBuf },
    /// The folder the output would go in does not exist.
    OutputFolderMissing { file: PathBuf, folder: PathBuf },
    /// The output names a folder (or a file is in the way of an output folder).
    OutputNotFile { file: PathBuf, is_folder: bool },
    /// Two outputs of one command have the same name.
    OutputTwice { file: PathBuf },
    /// A block handed to the writer is not a whole number of frames.
    PartialFrame {
        file: PathBuf,
        samples: usize,
        channels: usize,
    },
}

impl IoError {
    /// The file the error is about.
    pub fn file(&self) -> &Path {
        match self {
            IoError::NotFound { file }
            | IoError::Access { file, .. }
            | IoError::NotWav { file, .. }
            | IoError::UnsupportedFormat { file, .. }
            | IoError::Malformed { file, .. }
            | IoError::ChannelMismatch { file, .. }
            | IoError::SampleRateMismatch { file, .. }
            | IoError::NotComparable { file, .. }
            | IoError::OutputIsInput { file }
            | IoError::OutputExists { file }
            | IoError::OutputFolderMissing { file, .. }
            | IoError::OutputNotFile { file, .. }
            | IoError::OutputTwice { file }
            | IoError::PartialFrame { file, .. } => file,
        }
    }

    /// Classifies an operating-system error on `file`.
    pub(crate) fn from_os(file: &Path, source: std::io::Error) -> Self {
        if source.kind() == std::io::ErrorKind::NotFound {
            IoError::NotFound {
                file: file.to_path_buf(),
            }
        } else {
            IoError::Access {
                file: file.to_path_buf(),
                source,
            }
        }
    }

    /// Classifies an operating-system error on `file` while creating or writing it: a missing
    /// path there is a missing folder, not a missing file.
    pub(crate) fn from_os_write(file: &Path, source: std::io::Error) -> Self {
        if source.kind() == std::io::ErrorKind::NotFound {
            IoError::OutputFolderMissing {
                file: file.to_path_buf(),
                folder: super::output_files::folder_of(file).to_path_buf(),
            }
        } else {
            IoError::Access {
                file: file.to_path_buf(),
                source,
            }
        }
    }

    /// Classifies an error the WAV crate reported while reading `file`.
    pub(crate) fn from_wav_read(file: &Path, error: hound::Error) -> Self {
        let file = file.to_path_buf();
        match error {
            // A file too short to hold a RIFF header is simply not a WAV file (the WAV crate
            // reports a short read with a message of its own, not as an end-of-file kind).
            hound::Error::IoError(source) if short_read(&source) => IoError::NotWav {
                file,
                detail: "the file is shorter than a WAV header".to_string(),
            },
            hound::Error::IoError(source) => IoError::from_os(&file, source),
            hound::Error::FormatError(what) if what.contains("RIFF") || what.contains("WAVE") => {
                IoError::NotWav {
                    file,
                    detail: what.to_string(),
                }
            }
            hound::Error::FormatError(what) if what.contains("bits per sample") => {
                IoError::UnsupportedFormat {
                    file,
                    detail: what.to_string(),
                }
            }
            hound::Error::FormatError(what) => IoError::Malformed {
                file,
                detail: what.to_string(),
            },
            hound::Error::Unsupported => IoError::UnsupportedFormat {
                file,
                detail: "compressed or otherwise unsupported sample encoding".to_string(),
            },
            other => IoError::Malformed {
                file,
                detail: other.to_string(),
            },
        }
    }

    /// Classifies an error the WAV crate reported while reading samples of `file` (its header
    /// was fine): a short read there means the data stop before the header says they end.
    pub(crate) fn from_wav_data(file: &Path, error: hound::Error) -> Self {
        match error {
            hound::Error::IoError(source) if short_read(&source) => IoError::Malformed {
                file: file.to_path_buf(),
                detail: "the samples stop before the end the header announces: the file is \
                         truncated, or still being written"
                    .to_string(),
            },
            other => IoError::from_wav_read(file, other),
        }
    }

    /// Classifies an error the WAV crate reported while writing `file`.
    pub(crate) fn from_wav_write(file: &Path, error: hound::Error) -> Self {
        match error {
            hound::Error::IoError(source) => IoError::from_os_write(file, source),
            other => IoError::Malformed {
                file: file.to_path_buf(),
                detail: other.to_string(),
            },
        }
    }
}

impl fmt::Display for IoError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            IoError::NotFound { file } => write!(
                f,
                "{}: no such file\n  help: check the path; a relative path is taken from the \
                 current folder",
                file.display()
            ),
            IoError::Access { file, source } => write!(
                f,
                "{}: {}\n  help: check that you may read the file, or write in its folder",
                file.display(),
                plain_os_error(source)
            ),
            IoError::NotWav { file, detail } => write!(
                f,
                "{}: not a WAV file ({detail})\n  help: give a RIFF/WAVE file; convert other \
                 formats first",
                file.display()
            ),
            IoError::UnsupportedFormat { file, detail } => write!(
                f,
                "{}: unsupported WAV sample format ({detail})\n  help: use 16-, 24- or 32-bit \
                 integer PCM or 32-bit float; convert 8-bit, 64-bit float or compressed files first",
                file.display()
            ),
            IoError::OutputIsInput { file } => write!(
                f,
                "{}: this is the input file itself; writing the output there would destroy the \
                 input while it is being read\n  help: name another output file",
                file.display()
            ),
            IoError::NotComparable {
                file,
                reference,
                unit,
                found,
                expected,
            } => {
                let amount = |n: u32| match *unit {
                    "channel" => format!("{n} channel{}", plural(n as usize)),
                    _ => format!("{n} {unit}"),
                };
                write!(
                    f,
                    "{}: {}, but the reference {} has {}\n  help: compare a file with its own \
                     reference: same channel count, same sample rate",
                    file.display(),
                    amount(*found),
                    reference.display(),
                    amount(*expected)
                )
            }
            IoError::OutputExists { file } => write!(
                f,
                "{}: the file already exists; redress does not write over a file unless asked\n  \
                 help: name another file, or add --replace to write over this one",
                file.display()
            ),
            IoError::OutputFolderMissing { file, folder } => write!(
                f,
                "{}: the folder {} does not exist\n  help: create it first (mkdir -p {}), or \
                 name a file in a folder that exists",
                file.display(),
                folder.display(),
                folder.display()
            ),
            IoError::OutputNotFile { file, is_folder: true } => write!(
                f,
                "{}: this is a folder, not a file\n  help: name a file, e.g. {}",
                file.display(),
                file.join("out.wav").display()
            ),
            IoError::OutputNotFile {
                file,
                is_folder: false,
            } => write!(
                f,
                "{}: a file is in the way of this folder\n  help: name a folder (it is created \
                 when missing), not a file",
                file.display()
            ),
            IoError::OutputTwice { file } => write!(
                f,
                "{}: named for two outputs of one command\n  help: give each output its own \
                 name",
                file.display()
            ),
            IoError::Malformed { file, detail } => write!(
                f,
                "{}: damaged WAV file ({detail})\n  help: re-export the file from its source",
                file.display()
            ),
            IoError::ChannelMismatch {
                file,
                found,
                expected,
            } => write!(
                f,
                "{}: the file has {found} channel{} but the link has {expected}\n  help: give a \
                 file with {expected} channel{}, or change `channel_count` and the paths in the \
                 config",
                file.display(),
                plural(*found),
                plural(*expected)
            ),
            IoError::SampleRateMismatch {
                file,
                found,
                expected,
            } => write!(
                f,
                "{}: sample rate {found} Hz, expected {expected} Hz\n  help: resample the file \
                 first, or describe the link at the file's rate",
                file.display()
            ),
            IoError::PartialFrame {
                file,
                samples,
                channels,
            } => write!(
                f,
                "{}: a block of {samples} samples is not a whole number of {channels}-channel \
                 frames\n  help: this is a bug in the caller; hand the writer whole frames",
                file.display()
            ),
        }
    }
}

fn plural(n: usize) -> &'static str {
    if n == 1 {
        ""
    } else {
        "s"
    }
}

impl std::error::Error for IoError {
    fn source(&self) -> Option<&(dyn std::error::Error + 'static)> {
        match self {
            IoError::Access { source, .. } => Some(source),
            _ => None,
        }
    }
}

/// True for the WAV crate's short-read error (or a plain end of file).
fn short_read(source: &std::io::Error) -> bool {
    source.kind() == std::io::ErrorKind::UnexpectedEof
        || source.to_string().contains("Failed to read enough bytes")
}
