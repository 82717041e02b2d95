//! The optional `[audio]` and `[engine]` tables: devices and guard behaviour of the live service.

use super::schema::{
    AUDIO, AUDIO_TABLE, BUFFER_FRAMES, CLIP, CROSSFADE_MS, ENGINE, ENGINE_TABLE, FADE_IN_MS,
    FADE_OUT_MS, FALLBACK, GAIN_RELEASE_MS, INPUT_DEVICE, INSTABILITY_HOLD_MS,
    INSTABILITY_MARGIN_DB, OUTPUT_DEVICE,
};
use super::tree::{Node, Table};
use crate::model::error::{ConfigError, ConfigErrorKind};
use crate::model::{
    AudioSettings, ClipPolicy, EngineOptions, Fallback, RuntimeSettings, BUFFER_FRAMES_RANGE,
};

/// Reads `[audio]` and `[engine]`, each optional.
pub(crate) fn read_runtime(root: &Table<'_>) -> Result<RuntimeSettings, ConfigError> {
    let mut runtime = RuntimeSettings::default();
    if let Some(node) = root.get(AUDIO) {
        runtime.audio = read_audio(&node)?;
    }
    if let Some(node) = root.get(ENGINE) {
        runtime.engine = read_engine(&node)?;
    }
    Ok(runtime)
}

fn read_audio(node: &Node<'_>) -> Result<AudioSettings, ConfigError> {
    let table = node.table(&AUDIO_TABLE)?;
    let mut audio = AudioSettings::default();
    for (key, slot) in [
        (INPUT_DEVICE, &mut audio.input_device),
        (OUTPUT_DEVICE, &mut audio.output_device),
    ] {
        if let Some(n) = table.get(key) {
            let name = n.string()?.trim();
            if name.is_empty() {
                return Err(n.fail(
                    ConfigErrorKind::OutOfRange,
                    "the device name is empty",
                    "write \"default\", or a device id or name as `redress devices` lists them",
                ));
            }
            *slot = name.to_owned();
        }
    }
    if let Some(n) = table.get(BUFFER_FRAMES) {
        let frames = n.integer()?;
        let (low, high) = (
            i64::from(BUFFER_FRAMES_RANGE.0),
            i64::from(BUFFER_FRAMES_RANGE.1),
        );
        if !(low..=high).contains(&frames) {
            return Err(n.fail(
                ConfigErrorKind::OutOfRange,
                format!("buffer_frames must be from {low} to {high}, not {frames}"),
                "256 suits most devices; leave it out to let the device choose",
            ));
        }
        audio.buffer_frames = Some(frames as u32);
    }
    Ok(audio)
}

fn read_engine(node: &Node<'_>) -> Result<EngineOptions, ConfigError> {
    let table = node.table(&ENGINE_TABLE)?;
    let mut engine = EngineOptions::default();
    let times: [(&str, &mut f64, f64, f64); 5] = [
        (CROSSFADE_MS, &mut engine.crossfade_ms, 0.1, 2000.0),
        (FADE_IN_MS, &mut engine.fade_in_ms, 0.1, 10_000.0),
        (FADE_OUT_MS, &mut engine.fade_out_ms, 0.1, 10_000.0),
        (
            INSTABILITY_HOLD_MS,
            &mut engine.instability_hold_ms,
            0.0,
            1000.0,
        ),
        (GAIN_RELEASE_MS, &mut engine.gain_release_ms, 1.0, 10_000.0),
    ];
    for (key, slot, low, high) in times {
        if let Some(n) = table.get(key) {
            let v = n.number()?;
            if !(low..=high).contains(&v) {
                return Err(n.fail(
                    ConfigErrorKind::OutOfRange,
                    format!("{key} must be from {low} to {high} ms, not {v}"),
                    format!("leave {key} out for the default of {} ms", *slot),
                ));
            }
            *slot = v;
        }
    }
    if let Some(n) = table.get(INSTABILITY_MARGIN_DB) {
        let v = n.number()?;
        if !(0.0..=60.0).contains(&v) {
            return Err(n.fail(
                ConfigErrorKind::OutOfRange,
                format!("instability_margin_db must be from 0 to 60 dB, not {v}"),
                "leave it out for the default of 12 dB",
            ));
        }
        engine.instability_margin_db = v;
    }
    if let Some(n) = table.get(CLIP) {
        engine.clip = n.choice(&[
            ("hard_limit", ClipPolicy::HardLimit),
            ("soft_limit", ClipPolicy::SoftLimit),
            ("gain_reduction", ClipPolicy::GainReduction),
        ])?;
    }
    if let Some(n) = table.get(FALLBACK) {
        engine.fallback = n.choice(&[
            ("last_good", Fallback::LastGood),
            ("bypass", Fallback::Bypass),
        ])?;
    }
    Ok(engine)
}
