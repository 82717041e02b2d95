//! Every audio channel belongs to exactly one path: no channel claimed twice, none left over.

use super::link_table::LinkSettings;
use super::path_table::PathDraft;
use crate::model::error::{ConfigError, ConfigErrorKind};

/// Which path (by zero-based index and label) has claimed each channel so far.
pub(crate) struct ChannelOwners {
    owners: Vec<Option<(usize, String)>>,
}

impl ChannelOwners {
    pub(crate) fn new(channel_count: usize) -> Self {
        Self {
            owners: vec![None; channel_count],
        }
    }

    /// Claims the channels of path number `index`; a channel another path already has is an
    /// error placed where this path lists it. Channel indices were range-checked by the path.
    pub(crate) fn claim(&mut self, index: usize, draft: &PathDraft<'_>) -> Result<(), ConfigError> {
        for (&channel, node) in draft.path.channels.iter().zip(&draft.channel_nodes) {
            let Some(slot) = self.owners.get_mut(channel) else {
                continue;
            };
            if let Some((other, label)) = slot {
                return Err(node.fail(
                    ConfigErrorKind::ChannelTwice,
                    format!(
                        "channel {channel} is already modelled by path {} (\"{label}\")",
                        *other + 1
                    ),
                    format!(
                        "give each channel to exactly one path: remove {channel} from this path \
                         or from path {}",
                        *other + 1
                    ),
                ));
            }
            *slot = Some((index, draft.path.label.clone()));
        }
        Ok(())
    }

    /// The first channel no path claimed, as an error placed at `channel_count`.
    pub(crate) fn check_all_covered(&self, link: &LinkSettings<'_>) -> Result<(), ConfigError> {
        match self.owners.iter().position(Option::is_none) {
            None => Ok(()),
            Some(channel) => Err(link.channel_count_node.fail(
                ConfigErrorKind::ChannelNotCovered,
                format!(
                    "channel {channel} is not modelled by any path (channel_count = {} means \
                     channels 0 to {})",
                    link.channel_count,
                    link.channel_count - 1
                ),
                format!(
                    "add {channel} to the channels of a [[path]], or lower channel_count if the \
                     link carries fewer channels"
                ),
            )),
        }
    }
}
