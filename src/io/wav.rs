//! WAV files in and out, block by block, as interleaved `f32` samples.
//!
//! Integer files are scaled by 2^(bits−1), so they read into [−1, 1). Float files are read as
//! they are (they may hold values beyond full scale). Writing does the reverse: float output is
//! written unchanged; integer output is rounded to the nearest step and clamped to the format's
//! range. Either way the writer counts the samples at or beyond full scale (|x| ≥ 1, or not a
//! number), because a player or converter downstream will clip them.

use std::fs::File;
use std::io::{BufReader, BufWriter};
use std::path::{Path, PathBuf};

use serde::Serialize;

use super::IoError;

/// Frames per block when a caller has no reason to pick another size.
pub const DEFAULT_BLOCK_FRAMES: usize = 4096;

/// Integer or floating-point samples.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum SampleEncoding {
    Int,
    Float,
}

/// What a WAV file holds: channel count, rate and sample encoding.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub struct WavFormat {
    pub channels: usize,
    pub sample_rate: u32,
    pub bits: u16,
    pub encoding: SampleEncoding,
}

impl WavFormat {
    /// 32-bit float, the default output format: no clipping, no added rounding noise to speak of.
    pub fn float32(channels: usize, sample_rate: u32) -> Self {
        Self {
            channels,
            sample_rate,
            bits: 32,
            encoding: SampleEncoding::Float,
        }
    }

    /// Integer PCM of the given width (16, 24 or 32 bits).
    pub fn int(channels: usize, sample_rate: u32, bits: u16) -> Self {
        Self {
            channels,
            sample_rate,
            bits,
            encoding: SampleEncoding::Int,
        }
    }

    /// Whether we read and write this format: 16/24/32-bit integer or 32-bit float.
    pub fn is_supported(&self) -> bool {
        match self.encoding {
            SampleEncoding::Int => matches!(self.bits, 16 | 24 | 32),
            SampleEncoding::Float => self.bits == 32,
        }
    }

    /// Short description, e.g. "2 ch, 48000 Hz, 24-bit integer".
    pub fn describe(&self) -> String {
        let kind = match self.encoding {
            SampleEncoding::Int => "integer",
            SampleEncoding::Float => "float",
        };
        format!(
            "{} ch, {} Hz, {}-bit {kind}",
            self.channels, self.sample_rate, self.bits
        )
    }

    fn spec(&self) -> hound::WavSpec {
        hound::WavSpec {
            // Checked against u16 by `WavBlockWriter::create`.
            channels: self.channels as u16,
            sample_rate: self.sample_rate,
            bits_per_sample: self.bits,
            sample_format: match self.encoding {
                SampleEncoding::Int => hound::SampleFormat::Int,
                SampleEncoding::Float => hound::SampleFormat::Float,
            },
        }
    }

    fn unsupported_detail(&self) -> String {
        match self.encoding {
            SampleEncoding::Int => format!("{}-bit integer", self.bits),
            SampleEncoding::Float => format!("{}-bit float", self.bits),
        }
    }
}

/// Reads a WAV file a block of frames at a time.
pub struct WavBlockReader {
    file: PathBuf,
    reader: hound::WavReader<BufReader<File>>,
    format: WavFormat,
    frames_total: u64,
    frames_read: u64,
    /// 1 / 2^(bits−1) for integer files.
    int_scale: f32,
}

impl WavBlockReader {
    pub fn open(file: &Path) -> Result<Self, IoError> {
        let handle = File::open(file).map_err(|e| IoError::from_os(file, e))?;
        let reader = hound::WavReader::new(BufReader::new(handle))
            .map_err(|e| IoError::from_wav_read(file, e))?;
        let spec = reader.spec();
        let format = WavFormat {
            channels: usize::from(spec.channels),
            sample_rate: spec.sample_rate,
            bits: spec.bits_per_sample,
            encoding: match spec.sample_format {
                hound::SampleFormat::Int => SampleEncoding::Int,
                hound::SampleFormat::Float => SampleEncoding::Float,
            },
        };
        if !format.is_supported() {
            return Err(IoError::UnsupportedFormat {
                file: file.to_path_buf(),
                detail: format.unsupported_detail(),
            });
        }
        Ok(Self {
            file: file.to_path_buf(),
            frames_total: u64::from(reader.duration()),
            reader,
            format,
            frames_read: 0,
            int_scale: 1.0 / (1u64 << (spec.bits_per_sample - 1)) as f32,
        })
    }

    pub fn format(&self) -> WavFormat {
        self.format
    }

    /// Frames in the whole file, from its header.
    pub fn frames_total(&self) -> u64 {
        self.frames_total
    }

    /// Frames handed out so far.
    pub fn frames_read(&self) -> u64 {
        self.frames_read
    }

    /// Fills `block` (interleaved) with the next frames and returns how many frames it filled;
    /// 0 at the end of the file. `block.len()` should be a multiple of the channel count; any
    /// trailing partial frame of `block` is left untouched.
    pub fn read_block(&mut self, block: &mut [f32]) -> Result<usize, IoError> {
        let channels = self.format.channels;
        let wanted = block.len() / channels * channels;
        let mut filled = 0;
        match self.format.encoding {
            SampleEncoding::Float => {
                for sample in self.reader.samples::<f32>().take(wanted) {
                    block[filled] = sample.map_err(|e| IoError::from_wav_data(&self.file, e))?;
                    filled += 1;
                }
            }
            SampleEncoding::Int => {
                let scale = self.int_scale;
                for sample in self.reader.samples::<i32>().take(wanted) {
                    let value = sample.map_err(|e| IoError::from_wav_data(&self.file, e))?;
                    block[filled] = value as f32 * scale;
                    filled += 1;
                }
            }
        }
        if filled % channels != 0 {
            return Err(IoError::Malformed {
                file: self.file.clone(),
                detail: "the data ends in the middle of a frame".to_string(),
            });
        }
        let frames = filled / channels;
        self.frames_read += frames as u64;
        Ok(frames)
    }

    /// Reads every remaining frame (interleaved).
    pub fn read_to_end(&mut self) -> Result<Vec<f32>, IoError> {
        let channels = self.format.channels;
        let remaining = self.frames_total.saturating_sub(self.frames_read) as usize;
        let mut samples = vec![0.0; remaining * channels];
        let mut at = 0;
        while at < samples.len() {
            let frames = self.read_block(&mut samples[at..])?;
            if frames == 0 {
                break;
            }
            at += frames * channels;
        }
        samples.truncate(at);
        Ok(samples)
    }
}

/// What a finished write did.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub struct WriteSummary {
    pub frames: u64,
    /// Samples at or beyond full scale (|x| ≥ 1) or not finite. In integer output they were
    /// clamped (non-finite ones written as 0); in float output finite ones were kept as they were.
    pub clipped_samples: u64,
}

/// Writes a WAV file a block of frames at a time.
pub struct WavBlockWriter {
    file: PathBuf,
    writer: hound::WavWriter<BufWriter<File>>,
    format: WavFormat,
    frames: u64,
    clipped: u64,
}

impl WavBlockWriter {
    pub fn create(file: &Path, format: WavFormat) -> Result<Self, IoError> {
        if !format.is_supported() || format.channels == 0 || format.channels > usize::from(u16::MAX)
        {
            return Err(IoError::UnsupportedFormat {
                file: file.to_path_buf(),
                detail: format!(
                    "{} channels, {}",
                    format.channels,
                    format.unsupported_detail()
                ),
            });
        }
        let handle = File::create(file).map_err(|e| IoError::from_os_write(file, e))?;
        let writer = hound::WavWriter::new(BufWriter::new(handle), format.spec())
            .map_err(|e| IoError::from_wav_write(file, e))?;
        Ok(Self {
            file: file.to_path_buf(),
            writer,
            format,
            frames: 0,
            clipped: 0,
        })
    }

    pub fn format(&self) -> WavFormat {
        self.format
    }

    /// Appends whole frames (interleaved).
    pub fn write_block(&mut self, block: &[f32]) -> Result<(), IoError> {
        let channels = self.format.channels;
        if !block.len().is_multiple_of(channels) {
            return Err(IoError::PartialFrame {
                file: self.file.clone(),
                samples: block.len(),
                channels,
            });
        }
        let file = &self.file;
        match self.format.encoding {
            SampleEncoding::Float => {
                for &x in block {
                    if at_or_beyond_full_scale(x) {
                        self.clipped += 1;
                    }
                    self.writer
                        .write_sample(x)
                        .map_err(|e| IoError::from_wav_write(file, e))?;
                }
            }
            SampleEncoding::Int => {
                let full_scale = (1u64 << (self.format.bits - 1)) as f64;
                let (lowest, highest) = (-full_scale, full_scale - 1.0);
                for &x in block {
                    let value = if x.is_finite() {
                        (f64::from(x) * full_scale).round().clamp(lowest, highest)
                    } else {
                        0.0
                    };
                    if at_or_beyond_full_scale(x) {
                        self.clipped += 1;
                    }
                    self.writer
                        .write_sample(value as i32)
                        .map_err(|e| IoError::from_wav_write(file, e))?;
                }
            }
        }
        self.frames += (block.len() / channels) as u64;
        Ok(())
    }

    /// Samples at or beyond full scale so far.
    pub fn clipped_samples(&self) -> u64 {
        self.clipped
    }

    /// Completes the header and closes the file.
    pub fn finish(self) -> Result<WriteSummary, IoError> {
        let file = self.file;
        self.writer
            .finalize()
            .map_err(|e| IoError::from_wav_write(&file, e))?;
        Ok(WriteSummary {
            frames: self.frames,
            clipped_samples: self.clipped,
        })
    }
}

/// |x| ≥ 1, or not a number: a sample a player or converter would clip.
fn at_or_beyond_full_scale(x: f32) -> bool {
    x.is_nan() || x.abs() >= 1.0
}

/// Reads a whole WAV file: interleaved samples and the file's format.
pub fn read_wav(file: &Path) -> Result<(Vec<f32>, WavFormat), IoError> {
    let mut reader = WavBlockReader::open(file)?;
    let samples = reader.read_to_end()?;
    Ok((samples, reader.format()))
}

/// Writes interleaved samples as a whole WAV file in `format`.
pub fn write_wav(file: &Path, samples: &[f32], format: WavFormat) -> Result<WriteSummary, IoError> {
    let mut writer = WavBlockWriter::create(file, format)?;
    writer.write_block(samples)?;
    writer.finish()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A fresh folder per test, removed when the returned guard drops.
    fn temp_path(name: &str) -> (tempfile::TempDir, PathBuf) {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join(name);
        (dir, path)
    }

    #[test]
    fn integer_formats_round_trip_within_half_a_step() {
        // Half a quantisation step, 2^−bits, bounds the rounding error (common practice).
        let samples: Vec<f32> = (0..200).map(|i| ((i as f32) * 0.37).sin() * 0.9).collect();
        for bits in [16u16, 24, 32] {
            let (_dir_file, file) = temp_path(&format!("round-trip-{bits}.wav"));
            let summary = write_wav(&file, &samples, WavFormat::int(2, 48_000, bits)).unwrap();
            assert_eq!(summary.frames, 100);
            assert_eq!(summary.clipped_samples, 0);
            let (back, format) = read_wav(&file).unwrap();
            assert_eq!(format, WavFormat::int(2, 48_000, bits));
            let step = 2f64.powi(-(i32::from(bits) - 1));
            // f32 itself carries 24 bits of mantissa, so 32-bit files are exact only to f32.
            let bound = (step / 2.0).max(f64::from(f32::EPSILON));
            for (a, b) in samples.iter().zip(&back) {
                assert!(f64::from((a - b).abs()) <= bound, "{bits}-bit: {a} vs {b}");
            }
        }
    }

    #[test]
    fn float_round_trip_is_exact_and_keeps_overs() {
        let samples = [0.5f32, -1.5, 2.0, 0.25];
        let (_dir_file, file) = temp_path("float.wav");
        let summary = write_wav(&file, &samples, WavFormat::float32(1, 44_100)).unwrap();
        assert_eq!(summary.clipped_samples, 2);
        let (back, format) = read_wav(&file).unwrap();
        assert_eq!(format.encoding, SampleEncoding::Float);
        assert_eq!(back, samples);
    }

    #[test]
    fn integer_output_clamps_and_counts_full_scale() {
        // −1.0 is representable but sits at full scale, so it is counted; 0.999 is not.
        let samples = [1.0f32, -1.0, 1.7, -3.0, 0.999, f32::NAN];
        let (_dir_file, file) = temp_path("clip16.wav");
        let summary = write_wav(&file, &samples, WavFormat::int(1, 48_000, 16)).unwrap();
        assert_eq!(summary.clipped_samples, 5);
        let (back, _) = read_wav(&file).unwrap();
        let top = 32_767.0 / 32_768.0;
        // round(0.999 · 32768) = 32735.
        assert_eq!(back, vec![top, -1.0, top, -1.0, 32_735.0 / 32_768.0, 0.0]);
    }

    #[test]
    fn block_reads_cover_the_file_in_order() {
        let samples: Vec<f32> = (0..3 * 1000).map(|i| i as f32 / 4096.0 - 0.3).collect();
        let (_dir_file, file) = temp_path("blocks.wav");
        write_wav(&file, &samples, WavFormat::float32(3, 48_000)).unwrap();
        let mut reader = WavBlockReader::open(&file).unwrap();
        assert_eq!(reader.frames_total(), 1000);
        let mut block = vec![0.0; 3 * 128];
        let mut collected = Vec::new();
        loop {
            let frames = reader.read_block(&mut block).unwrap();
            if frames == 0 {
                break;
            }
            collected.extend_from_slice(&block[..frames * 3]);
        }
        assert_eq!(collected, samples);
    }

    #[test]
    fn refuses_eight_bit_and_text_files() {
        let (_dir_file, file) = temp_path("eight.wav");
        let spec = hound::WavSpec {
            channels: 1,
            sample_rate: 8_000,
            bits_per_sample: 8,
            sample_format: hound::SampleFormat::Int,
        };
        let mut w = hound::WavWriter::create(&file, spec).unwrap();
        w.write_sample(3i8).unwrap();
        w.finalize().unwrap();
        let error = WavBlockReader::open(&file).err().unwrap();
        assert!(
            matches!(error, IoError::UnsupportedFormat { .. }),
            "{error}"
        );
        assert!(error.to_string().contains("8-bit integer"));

        let (_dir_text, text) = temp_path("notes.wav");
        std::fs::write(&text, "this is a text file, long enough to have a header").unwrap();
        let error = WavBlockReader::open(&text).err().unwrap();
        assert!(matches!(error, IoError::NotWav { .. }), "{error}");

        let (_dir_missing, missing) = temp_path("does-not-exist.wav");
        let error = WavBlockReader::open(&missing).err().unwrap();
        assert!(matches!(error, IoError::NotFound { .. }), "{error}");
        assert!(error.to_string().contains("does-not-exist.wav"));
    }
}
