//! The physics checked against values from outside the project (published
//! closed forms, textbook examples, a reference library's tables) and
//! against properties that must hold: one test binary, one module per
//! subject. Each check names its source.

mod materials_apparent_dk;
mod materials_copper;
mod materials_dispersion;
mod materials_fab;
mod materials_loss;
mod materials_roughness;
mod materials_roughness_properties;
mod materials_weave;
mod reference;
mod tline_fieldsolver;
mod tline_properties;
mod tline_reference;
mod tline_solver_paths;
mod tline_textbook;
