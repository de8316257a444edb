//! The model catalogue. Adding a model is one file here plus one line in
//! [`MODELS`].

use crate::model::ModelSpec;

pub mod lotka_volterra;

/// Every model Tussock offers, in the order the app lists them.
pub static MODELS: &[&ModelSpec] = &[&lotka_volterra::SPEC];

/// The model with this scenario key.
pub fn find(key: &str) -> Option<&'static ModelSpec> {
    MODELS.iter().copied().find(|m| m.key == key)
}
