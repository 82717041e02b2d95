use serde::Serialize;

use super::settings::Fallback;

/// Something the audio thread wants the control thread to log. Plain `Copy` data: sending one
/// allocates nothing.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(tag = "event", rename_all = "snake_case")]
pub enum EngineEvent {
    /// A crossfade to filter set `generation` began.
    SwapStarted { generation: u64 },
    /// The crossfade finished; `generation` alone is running.
    SwapCompleted { generation: u64 },
    /// The incoming filter set ran away during its crossfade and was dropped.
    SwapAborted { generation: u64 },
    /// The instability guard reset filter set `generation` and fell back.
    InstabilityTrip {
        generation: u64,
        channel: usize,
        non_finite: bool,
        fallback: Fallback,
        /// Generation now running (0: bypass).
        now_running: u64,
    },
    /// The fade-out asked for before stopping is complete: output is silent from here on.
    FadeOutComplete,
}
