//! The optional `[audio]` and `[engine]` tables: devices and guard behaviour of the live service.

use super::schema::{
    AUDIO, AUDIO_TABLE, BUFFER_FRAMES, CALLBACK_PRIORITY, CLIP, CLOCKS, CONNECT_INPUTS,
    CONNECT_OUTPUTS, CROSSFADE_MS, ENGINE, ENGINE_TABLE, FADE_IN_MS, FADE_OUT_MS, FALLBACK,
    GAIN_RELEASE_MS, HOST, INPUT_DEVICE, INSTABILITY_HOLD_MS, INSTABILITY_MARGIN_DB, LOCK_MEMORY,
    OUTPUT_DEVICE,
};
use super::tree::{Node, Table};
use crate::model::error::{ConfigError, ConfigErrorKind};
use crate::model::{
    AudioHost, AudioSettings, ClipPolicy, Clocks, EngineOptions, Fallback, RuntimeSettings,
    BUFFER_FRAMES_RANGE, MAX_CALLBACK_PRIORITY,
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
    if let Some(n) = table.get(HOST) {
        audio.host = n.choice(&[
            ("alsa", AudioHost::Alsa),
            ("jack", AudioHost::Jack),
            ("pipewire", AudioHost::PipeWire),
        ])?;
    }
    if let Some(n) = table.get(CALLBACK_PRIORITY) {
        let priority = n.integer()?;
        let high = i64::from(MAX_CALLBACK_PRIORITY);
        if !(0..=high).contains(&priority) {
            return Err(n.fail(
                ConfigErrorKind::OutOfRange,
                format!("callback_priority must be from 0 to {high}, not {priority}"),
                "70 suits most machines; 0 leaves the callback threads at ordinary priority",
            ));
        }
        audio.callback_priority = priority as u8;
    }
    if let Some(n) = table.get(LOCK_MEMORY) {
        audio.lock_memory = n.boolean()?;
    }
    if let Some(n) = table.get(CLOCKS) {
        audio.clocks = n.choice(&[
            ("auto", Clocks::Auto),
            ("shared", Clocks::Shared),
            ("separate", Clocks::Separate),
        ])?;
    }
    for (key, slot) in [
        (CONNECT_INPUTS, &mut audio.connect_inputs),
        (CONNECT_OUTPUTS, &mut audio.connect_outputs),
    ] {
        let Some(n) = table.get(key) else { continue };
        if audio.host != AudioHost::Jack {
            return Err(n.fail(
                ConfigErrorKind::OutOfRange,
                format!(
                    "{key} names ports of a JACK graph, and host is \"{}\"",
                    audio.host.key()
                ),
                "set host = \"jack\", or leave the key out (other hosts connect by device name)",
            ));
        }
        for port in n.array()? {
            let name = port.string()?.trim();
            if name.is_empty() {
                return Err(port.fail(
                    ConfigErrorKind::OutOfRange,
                    "the port name is empty",
                    "write ports as `jack_lsp` lists them, e.g. \"system:capture_1\"",
                ));
            }
            slot.push(name.to_owned());
        }
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
