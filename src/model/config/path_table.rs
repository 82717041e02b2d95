//! One `[[path]]` table: label, channels, structure and exactly one channel model.

use super::difference_equation::read_difference_equation;
use super::echoes::read_echoes;
use super::finish_channel::{finish_channel, inverse_order};
use super::inverse_table::read_inverse;
use super::link_table::{read_channel_indices, LinkSettings};
use super::schema::{
    CHANNELS, DIFFERENCE_EQUATION, ECHOES, INVERSE, LABEL, PATH_TABLE, ROOTS, SECTIONS, STRUCTURE,
};
use super::sections::read_sections;
use super::tree::Node;
use super::zeros_poles::read_zeros_poles;
use crate::model::error::{ConfigError, ConfigErrorKind};
use crate::model::{ModelForm, Path, Structure};

/// The four ways to describe a path's channel; a path has exactly one of them.
const MODELS: [(&str, ModelForm); 4] = [
    (DIFFERENCE_EQUATION, ModelForm::DifferenceEquation),
    (ROOTS, ModelForm::ZerosPoles),
    (ECHOES, ModelForm::EchoPaths),
    (SECTIONS, ModelForm::Sections),
];

/// A checked path, with where each of its channels was written (for errors that only show up
/// across paths).
pub(crate) struct PathDraft<'a> {
    pub path: Path,
    pub channel_nodes: Vec<Node<'a>>,
}

/// Reads path number `index` (zero-based).
pub(crate) fn read_path<'a>(
    node: &Node<'a>,
    index: usize,
    link: &LinkSettings<'_>,
) -> Result<PathDraft<'a>, ConfigError> {
    let table = node.table(&PATH_TABLE)?;
    let label = match table.get(LABEL) {
        None => format!("path {}", index + 1),
        Some(n) => n.string()?.to_owned(),
    };

    let channels_node = table.require(
        CHANNELS,
        "list the zero-based audio channels this path models, e.g. channels = [0, 1]",
    )?;
    let channel_nodes = channels_node.array()?;
    if channel_nodes.is_empty() {
        return Err(channels_node.fail(
            ConfigErrorKind::EmptyList,
            "this path applies to no channel",
            "list the zero-based audio channels it models, e.g. channels = [0]",
        ));
    }
    let channels = read_channel_indices(&channel_nodes, link.channel_count, "this path")?;

    let requested_structure = match table.get(STRUCTURE) {
        None => None,
        Some(n) => Some(n.choice(&[
            ("direct_form_2t", Structure::DirectForm2T),
            ("sections", Structure::Sections),
            ("lattice_ladder", Structure::LatticeLadder),
        ])?),
    };

    let mut models: Vec<(&str, ModelForm, Node<'a>)> = MODELS
        .iter()
        .filter_map(|&(k, form)| table.get(k).map(|n| (k, form, n)))
        .collect();
    models.sort_by_key(|(k, _, n)| table.key_span(k).unwrap_or(n.span.clone()).start);
    let (form, model) = match models.as_slice() {
        [] => {
            return Err(table.node.fail(
                ConfigErrorKind::NoModel,
                "this path does not say what the link does to its channels",
                "give exactly one of: difference_equation = { b = […], a = […] }, \
                 [path.roots], [path.echoes], or sections = [[…]]",
            ))
        }
        [(_, form, node)] => (*form, node.clone()),
        [first, second, ..] => {
            let named: Vec<String> = models.iter().map(|(k, _, _)| format!("`{k}`")).collect();
            return Err(second.2.fail_at(
                &table.key_span(second.0).unwrap_or(second.2.span.clone()),
                ConfigErrorKind::SeveralModels,
                format!(
                    "this path is described more than one way ({}); a path has exactly one model",
                    named.join(" and ")
                ),
                format!(
                    "keep `{}` and remove the rest, or put the other description in its own \
                     [[path]] for other channels",
                    first.0
                ),
            ));
        }
    };
    let channel = match form {
        ModelForm::DifferenceEquation => read_difference_equation(&model)?,
        ModelForm::ZerosPoles => read_zeros_poles(&model)?,
        ModelForm::EchoPaths => read_echoes(&model, link.sample_rate)?,
        ModelForm::Sections => read_sections(&model)?,
    };
    let channel = finish_channel(channel, &model)?;

    // Direct form is fine up to a biquad; beyond that its pole positions grow sensitive to
    // coefficient rounding, so sections are the safer default (common practice).
    let structure = requested_structure.unwrap_or(if inverse_order(&channel) > 2 {
        Structure::Sections
    } else {
        Structure::DirectForm2T
    });

    let mut inverse = read_inverse(table.get(INVERSE), link.sample_rate)?;
    inverse.structure_configured = requested_structure.is_some();

    Ok(PathDraft {
        path: Path {
            label,
            channels,
            form,
            channel,
            structure,
            precision: link.precision,
            circle_tolerance: link.circle_tolerance,
            inverse,
        },
        channel_nodes,
    })
}
