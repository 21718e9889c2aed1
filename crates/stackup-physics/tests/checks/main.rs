//! The physics checked against values from outside the project (published
//! closed forms, textbook examples, a reference library's tables) and
//! against properties that must hold: one test binary, one module per
//! subject. Each check names its source.

mod coupon_reference;
mod materials_apparent_dk;
mod materials_copper;
mod materials_dispersion;
mod materials_fab;
mod materials_loss;
mod materials_roughness;
mod materials_roughness_properties;
mod materials_weave;
mod reference;
mod tline_conductor_loss;
mod tline_dielectric_loss;
mod tline_fieldsolver;
mod tline_properties;
mod tline_reference;
mod tline_solver_paths;
mod tline_textbook;
mod vias_reference;

/// A table of tests/reference/ whose rows are not all numbers (the via
/// stubs' layered segments), written by a generator script: its first
/// line names the reference library and its version (checked to say
/// scikit-rf); returned are its column line and its non-empty data lines.
pub(crate) fn scikit_rf_table(file: &str) -> Vec<String> {
    let path = format!("{}/tests/reference/{file}", env!("CARGO_MANIFEST_DIR"));
    let text = std::fs::read_to_string(path).expect("reference table present");
    let mut lines = text.lines();
    let header = lines.next().unwrap_or_default();
    assert!(
        header.starts_with("# reference library: scikit-rf "),
        "{file}: {header}"
    );
    let columns = lines.next().unwrap_or_default().to_string();
    let mut out = vec![columns];
    out.extend(lines.filter(|l| !l.trim().is_empty()).map(str::to_string));
    out
}
