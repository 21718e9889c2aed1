//! The typed stackup model, in SI units, with invariants checked.
//!
//! Every element keeps the JSON pointer of its YAML node so rules can point
//! findings at it. Built from the positioned YAML tree by [`build`].

mod build;
mod coupons;
mod derive;
mod layers;
mod materials;
mod net_classes;
mod reader;
mod settings;

pub use build::{build_stackup, Built, Gaps, HARMONIC_FACTOR};
pub use coupons::{Coupon, CouponFile, CouponKind};
pub use derive::default_fill;
pub use materials::{
    load_library, LibraryData, FIT_DF_ABSOLUTE, FIT_DF_RELATIVE, FIT_DK_ABSOLUTE, FIT_DK_RELATIVE,
    MAX_BOARD_DF, MAX_BOARD_DK, MAX_IMPEDANCE_TOLERANCE,
};

use std::collections::BTreeMap;

use crate::source::FileId;

/// A whole stackup file, loaded and checked.
#[derive(Debug, Clone)]
pub struct Stackup {
    pub file: FileId,
    pub board: Option<String>,
    /// Layers from top to bottom.
    pub layers: Vec<Layer>,
    /// Materials by name (file entries override library entries).
    pub materials: BTreeMap<String, Material>,
    pub foils: BTreeMap<String, Foil>,
    pub net_classes: Vec<NetClass>,
    pub matched_groups: Vec<MatchedGroup>,
    /// Measured test coupons (their files parsed by the loader).
    pub coupons: Vec<Coupon>,
    pub settings: Settings,
}

#[derive(Debug, Clone)]
pub struct Layer {
    pub name: String,
    pub pointer: String,
    pub kind: LayerKind,
}

/// The YAML keywords of a model enum, both ways: `keyword()` writes the
/// word the schema allows, `FromStr` reads it (anything else is an error;
/// the schema has already refused it). A word may be followed by deprecated
/// aliases (`Variant => "word" | "old-word"`): they are read, never written.
macro_rules! keywords {
    ($ty:ident { $($variant:ident => $word:literal $(| $alias:literal)*),+ $(,)? }) => {
        impl $ty {
            /// The word the YAML uses for this value.
            pub fn keyword(self) -> &'static str {
                match self {
                    $($ty::$variant => $word,)+
                }
            }
        }

        impl std::str::FromStr for $ty {
            type Err = UnknownKeyword;
            fn from_str(s: &str) -> Result<Self, Self::Err> {
                match s {
                    $($word $(| $alias)* => Ok($ty::$variant),)+
                    _ => Err(UnknownKeyword(s.to_string())),
                }
            }
        }
    };
}

/// A word that is not one of an enum's YAML keywords.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct UnknownKeyword(pub String);

keywords!(CopperRole { Signal => "signal", Plane => "plane", Mixed => "mixed" });
keywords!(FoilSide { Treated => "treated", Drum => "drum", BondTreatment => "bond-treatment" });
keywords!(DielectricKind {
    Core => "core",
    Prepreg => "prepreg",
    BondingFilm => "bonding-film",
    SolderMask => "solder-mask",
});
keywords!(MeasurementMethod {
    Resonator => "resonator",
    TransmissionLine => "transmission-line",
    Unknown => "unknown",
});
keywords!(Structure {
    Microstrip => "microstrip",
    EmbeddedMicrostrip => "embedded-microstrip",
    Stripline => "stripline",
    DiffMicrostrip => "diff-microstrip",
    DiffStripline => "diff-stripline",
    // `coplanar-grounded` is the deprecated spelling of `grounded-coplanar`
    // (the trade's word order); still accepted, never written.
    GroundedCoplanar => "grounded-coplanar" | "coplanar-grounded",
});
keywords!(Modulation { Nrz => "nrz", Pam4 => "pam4" });

#[cfg(test)]
mod tests {
    use super::*;

    /// Every keyword reads back as the value that writes it, and the words
    /// are the schema's (the schema is the contract).
    #[test]
    fn keywords_round_trip_and_match_the_schema() {
        let schema: serde_json::Value =
            serde_json::from_str(include_str!("../../schema/stackup.schema.json")).unwrap();
        let text = schema.to_string();
        macro_rules! check {
            ($($v:expr),+) => {$(
                let w = $v.keyword();
                assert_eq!(w.parse(), Ok($v), "{w}");
                assert!(text.contains(&format!("\"{w}\"")), "`{w}` is not in the schema");
            )+};
        }
        check!(CopperRole::Signal, CopperRole::Plane, CopperRole::Mixed);
        check!(FoilSide::Treated, FoilSide::Drum, FoilSide::BondTreatment);
        check!(
            DielectricKind::Core,
            DielectricKind::Prepreg,
            DielectricKind::BondingFilm,
            DielectricKind::SolderMask
        );
        check!(
            MeasurementMethod::Resonator,
            MeasurementMethod::TransmissionLine
        );
        check!(
            Structure::Microstrip,
            Structure::EmbeddedMicrostrip,
            Structure::Stripline,
            Structure::DiffMicrostrip,
            Structure::DiffStripline,
            Structure::GroundedCoplanar
        );
        // The deprecated alias reads as the same structure.
        assert_eq!("coplanar-grounded".parse(), Ok(Structure::GroundedCoplanar));
        assert_eq!(Structure::GroundedCoplanar.keyword(), "grounded-coplanar");
        check!(Modulation::Nrz, Modulation::Pam4);
        assert!("strip-line".parse::<Structure>().is_err());
    }
}

#[derive(Debug, Clone)]
pub enum LayerKind {
    Copper(CopperLayer),
    Dielectric(DielectricLayer),
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum CopperRole {
    Signal,
    Plane,
    Mixed,
}

impl CopperRole {
    /// Planes and mixed layers can serve as a return-current reference.
    pub fn is_reference(self) -> bool {
        matches!(self, CopperRole::Plane | CopperRole::Mixed)
    }

    pub fn as_str(self) -> &'static str {
        self.keyword()
    }
}

#[derive(Debug, Clone)]
pub struct CopperLayer {
    pub role: CopperRole,
    /// Finished thickness, m.
    pub thickness: f64,
    /// Remaining copper fraction after etching, 0..1.
    pub fill: Option<f64>,
    pub plated: bool,
    /// Face towards the top of the board.
    pub up: Option<Face>,
    /// Face towards the bottom of the board.
    pub down: Option<Face>,
    /// This layer's copper thickness tolerance (fraction), over
    /// `settings.fabrication`.
    pub thickness_tolerance: Option<f64>,
    /// This layer's etched-width tolerance (m), over `settings.fabrication`.
    pub etch_tolerance: Option<f64>,
}

/// Which side of the foil faces the dielectric.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FoilSide {
    Treated,
    Drum,
    BondTreatment,
}

impl FoilSide {
    pub fn as_str(self) -> &'static str {
        match self {
            FoilSide::Treated => "treated side",
            FoilSide::Drum => "drum side",
            FoilSide::BondTreatment => "bond-enhancement treatment",
        }
    }
}

/// Roughness of one copper surface, m.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Roughness {
    pub rz: Option<f64>,
    pub rq: Option<f64>,
    /// The roughness loss factor conductor loss uses for this surface
    /// (`loss-model:`; Hammerstad-Bekkadal when not given).
    pub loss_model: stackup_physics::roughness::RoughLossModel,
}

#[derive(Debug, Clone)]
pub struct Face {
    pub pointer: String,
    pub side: FoilSide,
    /// `None` when unknown (bond treatment with no data): carried as a range.
    pub roughness: Option<Roughness>,
    /// Name of the foil profile it came from, if any.
    pub foil: Option<String>,
}

#[derive(Debug, Clone)]
pub struct Foil {
    pub name: String,
    pub file: FileId,
    pub pointer: String,
    pub roughness: Roughness,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum DielectricKind {
    Core,
    Prepreg,
    BondingFilm,
    SolderMask,
}

impl DielectricKind {
    pub fn as_str(self) -> &'static str {
        match self {
            DielectricKind::Core => "core",
            DielectricKind::Prepreg => "prepreg",
            DielectricKind::BondingFilm => "bonding film",
            DielectricKind::SolderMask => "solder mask",
        }
    }
}

#[derive(Debug, Clone)]
pub struct DielectricLayer {
    pub kind: DielectricKind,
    pub material: String,
    pub material_pointer: String,
    /// Thickness used for the electrical model, m (pressed if known).
    pub thickness: f64,
    /// Whether `thickness` is a pressed value given by the user (false when
    /// only a nominal thickness was given).
    pub pressed_given: bool,
    /// Nominal (as-bought) thickness, if given.
    pub nominal_thickness: Option<f64>,
    pub glass_style: Option<String>,
    pub resin_content: Option<f64>,
    /// The Dk the design model gives this layer, when stated.
    pub modelled_dk: Option<f64>,
    /// Solder mask only: how it covers the outer copper.
    pub mask: Option<MaskCoat>,
    /// This ply's thickness tolerance (fraction), over
    /// `settings.fabrication`.
    pub thickness_tolerance: Option<f64>,
}

/// How a solder mask covers an outer layer's copper.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum MaskCoat {
    /// A coat that follows the traces: `over_laminate` thick on the bare
    /// laminate between them, `over_copper` on their tops and sides.
    Conformal {
        over_laminate: f64,
        over_copper: f64,
    },
    /// The old planar model, on request: the copper slot filled with mask
    /// and the layer's thickness over it.
    Planar,
}

impl DielectricLayer {
    /// `thickness` is a pressed thickness: a prepreg or bonding film (given
    /// as pressed, or pressed from its nominal thickness).
    pub fn is_pressed(&self) -> bool {
        matches!(
            self.kind,
            DielectricKind::Prepreg | DielectricKind::BondingFilm
        )
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum MeasurementMethod {
    Resonator,
    TransmissionLine,
    Unknown,
}

impl MeasurementMethod {
    pub fn as_str(self) -> &'static str {
        self.keyword()
    }
}

/// One measured (f, Dk, Df) point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DkPoint {
    pub frequency: f64,
    pub dk: f64,
    pub df: f64,
}

impl DkPoint {
    /// The points as the physics crate's fits take them.
    pub fn dielectric_points(
        points: &[DkPoint],
    ) -> Vec<stackup_physics::dispersion::DielectricPoint> {
        points
            .iter()
            .map(|p| stackup_physics::dispersion::DielectricPoint {
                f: p.frequency,
                dk: p.dk,
                df: p.df,
            })
            .collect()
    }
}

#[derive(Debug, Clone)]
pub struct Material {
    pub name: String,
    pub file: FileId,
    pub pointer: String,
    pub class: Option<String>,
    /// At least one point, sorted by frequency.
    pub points: Vec<DkPoint>,
    pub valid_from: Option<f64>,
    pub valid_to: Option<f64>,
    pub method: MeasurementMethod,
    pub dk_tolerance: Option<f64>,
    /// Set when the Dk is an estimate from resin content (see
    /// [`ResinSystem`]), with a sentence saying how it was made.
    pub estimate: Option<String>,
    /// Dk of the glass fabric, when the material (or its resin system)
    /// gives it: the fibre-weave estimate's glass (E-glass when `None`).
    pub glass_dk: Option<f64>,
}

/// A resin system: plies made of it get a Dk estimated from their resin
/// content by the Lichtenecker mixing rule (an estimate, labelled so).
#[derive(Debug, Clone, PartialEq)]
pub struct ResinSystem {
    pub name: String,
    pub file: FileId,
    pub pointer: String,
    pub class: Option<String>,
    pub resin_dk: f64,
    pub resin_df: f64,
    pub glass_dk: f64,
    pub glass_df: f64,
    pub frequency: f64,
    pub valid_from: Option<f64>,
    pub valid_to: Option<f64>,
}

impl Material {
    /// The Dk at the first data point (the headline value).
    pub fn dk(&self) -> f64 {
        self.points[0].dk
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Structure {
    Microstrip,
    EmbeddedMicrostrip,
    Stripline,
    DiffMicrostrip,
    DiffStripline,
    GroundedCoplanar,
}

impl Structure {
    pub fn as_str(self) -> &'static str {
        self.keyword()
    }

    /// Lines with a reference plane on both sides.
    pub fn is_stripline(self) -> bool {
        matches!(self, Structure::Stripline | Structure::DiffStripline)
    }

    pub fn is_differential(self) -> bool {
        matches!(self, Structure::DiffMicrostrip | Structure::DiffStripline)
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Modulation {
    Nrz,
    Pam4,
}

/// A target impedance with its tolerance (absolute, ohms).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ImpedanceTarget {
    pub target: f64,
    pub tolerance: f64,
    /// Pairs: the coupling coefficient (Z_even − Z_odd)/(Z_even + Z_odd)
    /// the pair is designed for.
    pub coupling: Option<f64>,
}

/// An insertion-loss budget: at most `loss` dB over `length` of route.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LossBudget {
    /// dB.
    pub loss: f64,
    /// m.
    pub length: f64,
}

#[derive(Debug, Clone)]
pub struct NetClass {
    pub name: String,
    pub pointer: String,
    pub structure: Structure,
    pub layer: String,
    /// Index of the signal layer in `Stackup::layers`.
    pub layer_index: usize,
    /// Named references (indices into layers), when given.
    pub references: Option<Vec<usize>>,
    /// Base width, m.
    pub width: f64,
    /// Top width, m (from `top-width` or the etch factor), if known.
    pub top_width: Option<f64>,
    pub etch_factor: Option<f64>,
    pub spacing: Option<f64>,
    pub gap: Option<f64>,
    pub impedance: Option<ImpedanceTarget>,
    /// Highest frequency of interest, Hz: given, or 3 × Nyquist from the
    /// data rate.
    pub max_frequency: Option<f64>,
    /// Whether `max_frequency` was given (not derived from a data rate).
    pub max_frequency_given: bool,
    /// Nyquist frequency of the data rate, Hz.
    pub nyquist: Option<f64>,
    pub data_rate: Option<f64>,
    /// The modulation of the data rate: given, or NRZ when a data rate
    /// comes without one.
    pub modulation: Option<Modulation>,
    /// Whether `modulation` was given.
    pub modulation_given: bool,
    pub assumed_dk: Option<f64>,
    pub via_fence_pitch: Option<f64>,
    /// Centre-to-centre distance to the neighbouring pair of the same
    /// class (differential classes), m.
    pub pair_pitch: Option<f64>,
    /// Insertion-loss budget, judged at the Nyquist frequency of a data
    /// rate, else at the highest frequency.
    pub loss_budget: Option<LossBudget>,
    pub launch_valid_to: Option<f64>,
    /// The solder mask is opened over this class's traces (`mask: open`,
    /// common for RF lines): no mask in its section.
    pub mask_open: bool,
}

#[derive(Debug, Clone)]
pub struct Segment {
    pub pointer: String,
    pub layer_index: usize,
    pub length: f64,
    /// Index into `Stackup::net_classes` of the class giving the geometry.
    pub net_class: Option<usize>,
}

#[derive(Debug, Clone)]
pub struct Net {
    pub name: String,
    pub pointer: String,
    pub segments: Vec<Segment>,
}

#[derive(Debug, Clone)]
pub struct MatchedGroup {
    pub name: String,
    pub pointer: String,
    /// Seconds.
    pub skew_budget: f64,
    pub nets: Vec<Net>,
}

/// Configured severity of a rule: a level, or off.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Level {
    Off,
    On(crate::finding::Severity),
}

#[derive(Debug, Clone)]
pub struct RuleSettings {
    pub pointer: String,
    pub level: Option<Level>,
    /// The rule's options given in the file, checked against its
    /// declared [`OptionSpec`]s: key → value (SI).
    pub values: BTreeMap<String, f64>,
}

impl RuleSettings {
    /// The value of an option: as given, else its declared default.
    pub fn value(&self, spec: &OptionSpec) -> f64 {
        self.values.get(spec.key).copied().unwrap_or(spec.default)
    }
}

/// What a rule option holds.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum OptionKind {
    /// A bare number or a percentage, from 0 to `max`.
    Ratio { max: f64 },
    /// A quantity with its unit (a bare number where the dimension allows
    /// one), not negative.
    Quantity(crate::units::Dimension),
}

/// One option a rule accepts under `settings.rules.<rule>`: its key, what
/// it holds, its default (in SI, and as the rule page writes it) and what
/// it does. The one place the default is written; the rule pages' Options
/// sections are checked against it.
#[derive(Debug)]
pub struct OptionSpec {
    pub key: &'static str,
    pub kind: OptionKind,
    pub default: f64,
    /// The default as the rule page gives it (`0.05`, `50 %`, `100 mm`).
    pub default_text: &'static str,
    /// What the option does, one sentence (the rule page's words).
    pub doc: &'static str,
}

/// A rule as the model stage checks `settings.rules` and suppressions
/// against: its name and its options. The rules hand these down (the model
/// knows no rule).
#[derive(Debug, Clone, Copy)]
pub struct RuleSpec {
    pub name: &'static str,
    pub options: &'static [OptionSpec],
}

#[derive(Debug, Clone)]
pub struct Suppression {
    pub pointer: String,
    pub rule: String,
    /// A layer, material, net class or group name; `None` = whole file.
    pub at: Option<String>,
    /// For an inline suppression (a `suppress:` list on the element
    /// itself): the element's JSON pointer. It, not `at`, sets the scope.
    pub scope: Option<String>,
    pub reason: String,
}

#[derive(Debug, Clone)]
pub struct BoardThickness {
    pub pointer: String,
    pub target: f64,
    /// Absolute, m.
    pub tolerance: f64,
}

#[derive(Debug, Clone, Default)]
pub struct Settings {
    pub board_thickness: Option<BoardThickness>,
    /// The fabricator's tolerances (`settings.fabrication`).
    pub fabrication: Fabrication,
    pub rules: BTreeMap<String, RuleSettings>,
    pub suppressions: Vec<Suppression>,
}

/// The fabricator's build tolerances the impedance corners use. Each
/// default is common practice, no source (typical of board fabricators'
/// capability statements), and `settings.fabrication` overrides it.
#[derive(Debug, Clone, PartialEq)]
pub struct Fabrication {
    /// Etched trace width, ± m (default 12.7 µm: ±0.5 mil).
    pub etch_width: f64,
    /// Pressed prepreg and core thickness, ± fraction (default 10 %).
    pub dielectric_thickness: f64,
    /// Trace copper thickness (foil plus plating), ± fraction (default 10 %).
    pub copper_thickness: f64,
    /// Solder-mask thickness, ± fraction (default 30 %).
    pub mask_thickness: f64,
    /// Dk of a material that states no `dk-tolerance`, ± fraction (default
    /// 2 %).
    pub dk: f64,
    /// JSON pointer of each key given (for findings that name it).
    pub given: BTreeMap<&'static str, String>,
}

/// Default etched-width tolerance, ± m: ±0.5 mil (common practice, no
/// source: typical of fabricators' capability statements for inner layers).
pub const DEFAULT_ETCH_WIDTH: f64 = 12.7e-6;
/// Default pressed-thickness tolerance of prepreg and core, ± fraction
/// (common practice, no source).
pub const DEFAULT_DIELECTRIC_THICKNESS: f64 = 0.10;
/// Default trace copper thickness tolerance (foil and plating), ± fraction
/// (common practice, no source).
pub const DEFAULT_COPPER_THICKNESS: f64 = 0.10;
/// Default solder-mask thickness tolerance, ± fraction (common practice,
/// no source: liquid photoimageable mask varies widely over the panel).
pub const DEFAULT_MASK_THICKNESS: f64 = 0.30;
/// Default Dk tolerance of a material that states none, ± fraction (common
/// practice, no source: laminate Dk lots are commonly held to about ±0.05
/// on 3 to 4).
pub const DEFAULT_DK_TOLERANCE: f64 = 0.02;

impl Default for Fabrication {
    fn default() -> Self {
        Fabrication {
            etch_width: DEFAULT_ETCH_WIDTH,
            dielectric_thickness: DEFAULT_DIELECTRIC_THICKNESS,
            copper_thickness: DEFAULT_COPPER_THICKNESS,
            mask_thickness: DEFAULT_MASK_THICKNESS,
            dk: DEFAULT_DK_TOLERANCE,
            given: BTreeMap::new(),
        }
    }
}

impl Stackup {
    pub fn layer_index(&self, name: &str) -> Option<usize> {
        self.layers.iter().position(|l| l.name == name)
    }

    pub fn copper(&self, i: usize) -> Option<&CopperLayer> {
        match &self.layers.get(i)?.kind {
            LayerKind::Copper(c) => Some(c),
            LayerKind::Dielectric(_) => None,
        }
    }

    pub fn dielectric(&self, i: usize) -> Option<&DielectricLayer> {
        match &self.layers.get(i)?.kind {
            LayerKind::Dielectric(d) => Some(d),
            LayerKind::Copper(_) => None,
        }
    }

    /// Thickness of layer `i`, m.
    pub fn thickness(&self, i: usize) -> f64 {
        match &self.layers[i].kind {
            LayerKind::Copper(c) => c.thickness,
            LayerKind::Dielectric(d) => d.thickness,
        }
    }

    /// Total thickness over all layers, m.
    pub fn total_thickness(&self) -> f64 {
        (0..self.layers.len()).map(|i| self.thickness(i)).sum()
    }

    /// Nearest reference (plane or mixed) copper layer above layer `i`.
    pub fn reference_above(&self, i: usize) -> Option<usize> {
        (0..i)
            .rev()
            .find(|&j| self.copper(j).is_some_and(|c| c.role.is_reference()))
    }

    /// Nearest reference (plane or mixed) copper layer below layer `i`.
    pub fn reference_below(&self, i: usize) -> Option<usize> {
        (i + 1..self.layers.len()).find(|&j| self.copper(j).is_some_and(|c| c.role.is_reference()))
    }

    /// Copper layers, as indices, top to bottom.
    /// Nearest copper layer above (`up`) or below layer `i`, whatever its
    /// role.
    pub fn nearest_copper(&self, i: usize, up: bool) -> Option<usize> {
        if up {
            (0..i).rev().find(|&j| self.copper(j).is_some())
        } else {
            (i + 1..self.layers.len()).find(|&j| self.copper(j).is_some())
        }
    }

    pub fn copper_indices(&self) -> Vec<usize> {
        (0..self.layers.len())
            .filter(|&i| self.copper(i).is_some())
            .collect()
    }
}

impl NetClass {
    /// The frequency the line's impedance, apparent Dk and loss are
    /// evaluated at: the given highest frequency, else the Nyquist
    /// frequency, else 1 GHz.
    pub fn analysis_frequency(&self) -> f64 {
        if self.max_frequency_given {
            self.max_frequency.unwrap_or(1e9)
        } else {
            self.nyquist.unwrap_or(1e9)
        }
    }
}
