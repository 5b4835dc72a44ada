//! Built-in emission masks from published regulations (names are the project's own).
//!
//! See docs/masks.md for each mask's citation and whether its figures were read or recalled.

use crate::ir::Mask;

/// Every built-in mask.
pub fn builtin_masks() -> Vec<Mask> {
    Vec::new()
}

/// Names of the built-in masks (for name resolution and suggestions).
pub fn builtin_names() -> Vec<String> {
    builtin_masks().into_iter().map(|m| m.name).collect()
}
