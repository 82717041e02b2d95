use super::{decay_60db_samples, DesignError, DesignMethod, InverseDesign};
use crate::analysis::{ChannelAnalysis, Placement, Verdict};
use crate::model::TransferFunction;
use crate::numeric::response::peak_magnitude;
use crate::numeric::winding::largest_zero_radius;

/// The exact inverse G(z) = A(z)/B′(z) of a stable channel whose zeros are all strictly inside
/// the unit circle. `analysis` must be the analysis of `channel`.
pub fn design_exact(
    channel: &TransferFunction,
    analysis: &ChannelAnalysis,
    sample_rate: f64,
) -> Result<InverseDesign, DesignError> {
    if !analysis.channel_stable {
        return Err(DesignError::UnstableChannel {
            poles: analysis
                .poles
                .iter()
                .filter(|p| p.placement != Placement::Inside)
                .copied()
                .collect(),
        });
    }
    if let Verdict::NotInvertible { on_circle, outside } = &analysis.verdict {
        return Err(DesignError::NoStableInverse {
            on_circle: on_circle.clone(),
            outside: outside.clone(),
        });
    }
    let stripped = &channel.b[analysis.bulk_delay..];
    let lead = stripped[0];
    // G = A/B′, scaled by 1/b′₀ so the recursion's own coefficient is 1.
    let inverse = TransferFunction::new(
        channel.a.iter().map(|x| x / lead).collect(),
        stripped.iter().map(|x| x / lead).collect(),
    );
    let peak = peak_magnitude(&inverse.b, &inverse.a);
    let largest_pole = if analysis.zero_count.listed {
        analysis
            .zeros
            .iter()
            .map(|z| z.root.radius())
            .fold(0.0, f64::max)
    } else {
        // Not listed (a long channel): bounded from above without roots.
        largest_zero_radius(stripped, 1e-9).unwrap_or(1.0)
    };
    let decay = decay_60db_samples(largest_pole, inverse.b.len().max(inverse.a.len()));
    Ok(InverseDesign {
        method: DesignMethod::Exact,
        sample_rate,
        gain: inverse.b[0],
        inverse,
        residual_delay_samples: analysis.bulk_delay,
        added_latency_samples: 0,
        peak_boost_db: peak.level_db,
        peak_boost_hz: peak.omega * sample_rate / (2.0 * std::f64::consts::PI),
        decay_60db_seconds: decay / sample_rate,
        reflected_zeros: Vec::new(),
        all_pass: None,
        boost_cap: None,
        fir: None,
        unity_scale_db: 0.0,
        cepstral: None,
        band: None,
        knee: None,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::analyse;
    use crate::numeric::poly::multiply;

    // Source: common practice — H·(1/H) = 1; with a bulk delay D the cascade is z⁻ᴰ.
    #[test]
    fn cascade_is_pure_delay() {
        let channel = TransferFunction::new(vec![0.0, 0.0, 2.0, 0.6, 0.1], vec![1.0, -0.3]);
        let analysis = analyse(&channel, 1e-9).unwrap();
        let g = design_exact(&channel, &analysis, 48_000.0).unwrap();
        assert_eq!(g.residual_delay_samples, 2);
        assert!((g.gain - 0.5).abs() < 1e-15);
        // H·G = (B·A_g)/(A·B_g) should reduce to z⁻²: B·G_b == z⁻²·A·G_a.
        let num = multiply(&channel.b, &g.inverse.b);
        let mut den = vec![0.0, 0.0];
        den.extend(multiply(&channel.a, &g.inverse.a));
        for (x, y) in num.iter().zip(den.iter()) {
            assert!((x - y).abs() < 1e-15);
        }
    }

    #[test]
    fn refuses_outside_zero() {
        let channel = TransferFunction::new(vec![1.0, 2.0], vec![1.0]);
        let analysis = analyse(&channel, 1e-9).unwrap();
        assert!(matches!(
            design_exact(&channel, &analysis, 48_000.0),
            Err(DesignError::NoStableInverse { .. })
        ));
    }

    #[test]
    fn refuses_unstable_channel() {
        let channel = TransferFunction::new(vec![1.0], vec![1.0, 0.0, -1.21]);
        let analysis = analyse(&channel, 1e-9).unwrap();
        assert!(matches!(
            design_exact(&channel, &analysis, 48_000.0),
            Err(DesignError::UnstableChannel { .. })
        ));
    }
}
