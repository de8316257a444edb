//! The model catalogue. Adding a model is one file here plus one line in
//! [`MODELS`].

use crate::model::{Channel, ChannelKind, ModelSpec, Outcome, Params};

pub mod competition;
pub mod exponential;
pub mod logistic;
pub mod lotka_volterra;
pub mod rosenzweig_macarthur;

/// Every model Tussock offers, in the order the app lists them.
pub static MODELS: &[&ModelSpec] = &[
    &lotka_volterra::SPEC,
    &rosenzweig_macarthur::SPEC,
    &competition::SPEC,
    &logistic::SPEC,
    &exponential::SPEC,
];

/// The model with this scenario key.
pub fn find(key: &str) -> Option<&'static ModelSpec> {
    MODELS.iter().copied().find(|m| m.key == key)
}

/// For models without a verdict from parameters alone.
pub(crate) fn no_outcome(_: &Params) -> Option<Outcome> {
    None
}

/// No constant harvest or stocking: each species' axis is invariant, which
/// the theory behind [`crate::model::Guarantees`] needs.
pub(crate) fn unharvested(p: &Params) -> bool {
    p.harvest.iter().all(|&h| h == 0.0)
}

/// For models without cross-parameter checks.
pub(crate) fn no_check(_: &Params) -> Result<(), (&'static str, String)> {
    Ok(())
}

/// The five events of the predator–prey models, in the order their
/// `propensities` fill them: prey births, prey crowding deaths, predation,
/// predator births, predator deaths.
pub(crate) static PREDATOR_PREY_CHANNELS: [Channel; 5] = [
    Channel::new("prey births", ChannelKind::Birth, [1, 0]),
    Channel::new("prey crowding deaths", ChannelKind::Death, [-1, 0]),
    Channel::new("prey eaten", ChannelKind::Predation, [-1, 0]),
    Channel::new("predator births", ChannelKind::Birth, [0, 1]),
    Channel::new("predator deaths", ChannelKind::Death, [0, -1]),
];

/// The four events of the one-population models, in the order their
/// `propensities` fill them: births, deaths, immigration, emigration.
pub(crate) static ONE_POPULATION_CHANNELS: [Channel; 4] = [
    Channel::new("births", ChannelKind::Birth, [1, 0]),
    Channel::new("deaths", ChannelKind::Death, [-1, 0]),
    Channel::new("immigration", ChannelKind::Immigration, [1, 0]),
    Channel::new("emigration", ChannelKind::Emigration, [-1, 0]),
];
