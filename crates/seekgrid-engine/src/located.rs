//! Which part of the incident file an engine error concerns, so that the caller can print it
//! as `FILE:LINE:COL` ([`seekgrid_incident::Incident::error_at`]).

use crate::planning::PlanRunError;
use crate::timeline::MapError;
use seekgrid_incident::model::Item;

impl MapError {
    /// The part of the incident file at fault, when one is.
    #[must_use]
    pub fn item(&self) -> Option<Item> {
        match self {
            Self::Prepare(e) => Some(e.item()),
            Self::Grid(_) | Self::NoExtent => Some(Item::Grid),
            Self::Prior(e) => match e.as_ref() {
                seekgrid_prior::PriorError::InScenario { scenario, .. } => {
                    Some(Item::Scenario(scenario.clone()))
                }
                _ => None,
            },
            Self::Drift { id, .. } => Some(Item::Scenario(id.clone())),
            Self::Search { id, .. } => Some(Item::Search(id.clone())),
            Self::NowhereToBe { .. } => Some(Item::Header),
            _ => None,
        }
    }
}

impl PlanRunError {
    /// The part of the incident file at fault, when one is.
    #[must_use]
    pub fn item(&self) -> Option<Item> {
        match self {
            Self::Map(e) => e.item(),
            _ => None,
        }
    }
}
