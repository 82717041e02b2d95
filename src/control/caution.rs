//! The caution a user sees before the live service drives loudspeakers: in `redress run --help`
//! and, with each path's peak boost, once in the log when the service starts on devices.
//!
//! An inverse boosts whatever the link attenuated; the guards (fade-in, limiter, runaway reset)
//! protect against faults, not against a level set too high downstream, so the person at the
//! amplifier has to know how much boost to expect before the first sound.

use crate::pipeline::LinkPlan;

/// The caution in general terms, for help texts.
pub const CAUTION: &str = "Caution: the inverse boosts whatever the link attenuated, by as \
much as each path's peak boost (`redress check` reports it; the default cap is 20 dB). Start \
with the amplifier turned down and raise the level gradually; protect ears and equipment \
(loudspeakers, amplifiers, in-ear monitors) from sudden loud or high-frequency output. The \
fade-in, limiter and runaway guard protect against faults, not against a level set too high \
downstream. Where sound levels are regulated, or the work calls for a licensed practitioner, \
those rules come first.";

/// One log line: the caution with every runnable path's peak boost and where it is.
pub fn start_up_caution(plan: &LinkPlan) -> String {
    let boosts: Vec<String> = plan
        .paths
        .iter()
        .enumerate()
        .filter_map(|(i, p)| {
            let design = p.design.as_ref()?.as_ref().ok()?;
            Some(format!(
                "path {} `{}` up to {:.1} dB at {:.0} Hz",
                i + 1,
                p.path.label,
                design.peak_boost_db,
                design.peak_boost_hz
            ))
        })
        .collect();
    format!(
        "caution: opening the output devices; the inverse boosts what the link attenuated \
         ({}). Start quietly and raise the level gradually, protect ears and equipment, and \
         where sound levels are regulated those rules come first",
        boosts.join("; ")
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::config::parse_link;
    use crate::pipeline::plan_link;

    #[test]
    fn names_every_path_with_its_peak_boost() {
        // 1/(1 + 0.5 z⁻¹) peaks at ω = π with gain 1/0.5 = 2, 6.02 dB (common practice); the
        // band is the whole axis, so the peak stays where it is.
        let text = "[link]\nsample_rate_hz = 48000\nchannel_count = 2\n\n[[path]]\nlabel = \
                    \"left feed\"\nchannels = [0]\ndifference_equation = { b = [1.0, 0.5], a = \
                    [1.0] }\n[path.inverse]\ncorrection_band_hz = [0, 24000]\n\n[[path]]\nlabel = \"right feed\"\nchannels = [1]\n\
                    difference_equation = { b = [1.0], a = [1.0] }\n";
        let plan = plan_link(&parse_link(text, None).unwrap());
        let line = start_up_caution(&plan);
        assert!(
            line.contains("path 1 `left feed` up to 6.0 dB at 24000 Hz"),
            "{line}"
        );
        assert!(line.contains("path 2 `right feed` up to 0.0 dB"), "{line}");
        assert!(line.contains("raise the level gradually"), "{line}");
    }
}
