//! Structurally valid stackups with numerically hostile values, built from
//! fuzzer bytes with `arbitrary` and written out as YAML text.
//!
//! The shape follows the schema (layers, materials, foils, net classes,
//! matched groups, settings) so most inputs get past the schema and reach
//! the model, the field solver and the rules; the numbers are drawn from
//! zero, -0, 1e-300, 1e300, the smallest normal and subnormal doubles, the
//! largest double, integers beyond 2^53 and u64, values just inside and just
//! outside each field's bounds, `.nan`/`.inf`, and ordinary values.

use std::fmt::Write;

use arbitrary::{Arbitrary, Result, Unstructured};

/// A number for one field: hostile or ordinary (15 in 16 ordinary, so
/// that most stackups get past the model to the solver and the rules).
#[derive(Debug, Clone, Copy)]
pub enum Num {
    /// An ordinary value inside the field's typical range (fraction of it).
    Typical(u16),
    Zero,
    NegZero,
    Tiny,
    Huge,
    MinPositive,
    Subnormal,
    Max,
    /// 2^53 + 1: not representable as a double.
    Beyond2p53,
    /// 18446744073709551615 written as an integer.
    U64Max,
    /// Just inside the field's lower bound.
    LowInside,
    /// Just outside the field's lower bound.
    LowOutside,
    /// Just inside the field's upper bound.
    HighInside,
    /// Just outside the field's upper bound.
    HighOutside,
    Negative,
    Nan,
    Inf,
}

impl<'a> Arbitrary<'a> for Num {
    fn arbitrary(u: &mut Unstructured<'a>) -> Result<Self> {
        const HOSTILE: [Num; 16] = [
            Num::Zero,
            Num::NegZero,
            Num::Tiny,
            Num::Huge,
            Num::MinPositive,
            Num::Subnormal,
            Num::Max,
            Num::Beyond2p53,
            Num::U64Max,
            Num::LowInside,
            Num::LowOutside,
            Num::HighInside,
            Num::HighOutside,
            Num::Negative,
            Num::Nan,
            Num::Inf,
        ];
        let pick = u8::arbitrary(u)?;
        if pick < 240 {
            Ok(Num::Typical(u16::arbitrary(u)?))
        } else {
            Ok(HOSTILE[usize::from(pick - 240) % HOSTILE.len()])
        }
    }
}

/// A field's typical range and schema/model bounds, in the unit written.
#[derive(Clone, Copy)]
pub struct Field {
    pub lo: f64,
    pub hi: f64,
    pub min: f64,
    pub max: f64,
    pub unit: &'static str,
}

const THICK: Field = Field {
    lo: 10.0,
    hi: 500.0,
    min: 0.0,
    max: 1e6,
    unit: "um",
};
const WIDTH: Field = Field {
    lo: 50.0,
    hi: 600.0,
    min: 0.0,
    max: 1e6,
    unit: "um",
};
const ROUGH: Field = Field {
    lo: 0.1,
    hi: 12.0,
    min: 0.0,
    max: 1e3,
    unit: "um",
};
const DK: Field = Field {
    lo: 1.0,
    hi: 12.0,
    min: 1.0,
    // The model's limit for a board dielectric (`MAX_BOARD_DK`).
    max: 100.0,
    unit: "",
};
const DF: Field = Field {
    lo: 0.0,
    hi: 0.05,
    min: 0.0,
    // The model's limit (`MAX_BOARD_DF`).
    max: 0.1,
    unit: "",
};
const FREQ: Field = Field {
    lo: 0.1,
    hi: 100.0,
    min: 0.0,
    max: 1e6,
    unit: "GHz",
};
const FRACTION: Field = Field {
    lo: 0.0,
    hi: 1.0,
    min: 0.0,
    max: 1.0,
    unit: "",
};
const OHM: Field = Field {
    lo: 20.0,
    hi: 120.0,
    min: 0.0,
    max: 1e6,
    unit: "ohm",
};
const ETCH: Field = Field {
    lo: 1.0,
    hi: 5.0,
    min: 0.0,
    max: 1e3,
    unit: "",
};
const LENGTH_MM: Field = Field {
    lo: 1.0,
    hi: 300.0,
    min: 0.0,
    max: 1e6,
    unit: "mm",
};
const SKEW: Field = Field {
    lo: 0.5,
    hi: 20.0,
    min: 0.0,
    max: 1e6,
    unit: "ps",
};
const RATE: Field = Field {
    lo: 0.1,
    hi: 112.0,
    min: 0.0,
    max: 1e6,
    unit: "Gbps",
};

fn next_up(x: f64) -> f64 {
    if x == 0.0 {
        f64::from_bits(1)
    } else if x > 0.0 {
        f64::from_bits(x.to_bits() + 1)
    } else {
        f64::from_bits(x.to_bits() - 1)
    }
}

fn next_down(x: f64) -> f64 {
    -next_up(-x)
}

/// The number as YAML/unit text (no unit).
fn number_text(n: Num, f: Field) -> String {
    let v = match n {
        Num::Typical(t) => f.lo + (f.hi - f.lo) * f64::from(t) / f64::from(u16::MAX),
        Num::Zero => 0.0,
        Num::NegZero => -0.0,
        Num::Tiny => 1e-300,
        Num::Huge => 1e300,
        Num::MinPositive => f64::MIN_POSITIVE,
        Num::Subnormal => 5e-324,
        Num::Max => f64::MAX,
        Num::Beyond2p53 => return "9007199254740993".into(),
        Num::U64Max => return "18446744073709551615".into(),
        Num::LowInside => {
            if f.min == 0.0 {
                f64::from_bits(1)
            } else {
                next_up(f.min)
            }
        }
        Num::LowOutside => next_down(f.min),
        Num::HighInside => next_down(f.max),
        Num::HighOutside => next_up(f.max),
        Num::Negative => -(f.lo + f.hi) / 2.0,
        Num::Nan => return ".nan".into(),
        Num::Inf => return ".inf".into(),
    };
    // `{:e}` keeps every digit needed to round-trip and stays short for
    // 1e300 and 5e-324.
    format!("{v:e}")
}

/// A quantity with the field's unit, as a YAML scalar.
fn quantity(n: Num, f: Field) -> String {
    let t = number_text(n, f);
    if f.unit.is_empty() {
        t
    } else {
        format!("\"{t} {}\"", f.unit)
    }
}

#[derive(Debug, Arbitrary)]
pub struct Material {
    pub dk: Num,
    pub df: Num,
    pub frequency: Num,
    pub valid_from: Option<Num>,
    pub valid_to: Option<Num>,
    pub dk_tolerance: Option<Num>,
    pub method: u8,
}

#[derive(Debug, Arbitrary)]
pub struct Foil {
    pub rz: Option<Num>,
    pub rq: Option<Num>,
}

#[derive(Debug, Arbitrary)]
pub struct Face {
    pub side: u8,
    /// Named foil (index) or inline roughness.
    pub foil: Option<u8>,
    pub rz: Option<Num>,
    pub rq: Option<Num>,
}

#[derive(Debug, Arbitrary)]
pub enum Layer {
    Dielectric {
        kind: u8,
        material: u8,
        thickness: Num,
        pressed: bool,
        resin_content: Option<Num>,
        modelled_dk: Option<Num>,
    },
    Copper {
        role: u8,
        thickness: Num,
        ounces: bool,
        fill: Option<Num>,
        plated: bool,
        up: Option<Face>,
        down: Option<Face>,
    },
}

#[derive(Debug, Arbitrary)]
pub struct NetClass {
    pub structure: u8,
    pub layer: u8,
    pub references: Option<(u8, u8)>,
    pub width: Num,
    pub top_width: Option<Num>,
    pub etch_factor: Option<Num>,
    pub spacing: Option<Num>,
    pub gap: Option<Num>,
    pub target: Num,
    pub tolerance: Option<Num>,
    pub max_frequency: Option<Num>,
    pub data_rate: Option<(Num, bool)>,
    pub assumed_dk: Option<Num>,
    pub via_fence_pitch: Option<Num>,
    pub launch_valid_to: Option<Num>,
}

#[derive(Debug, Arbitrary)]
pub struct Segment {
    pub layer: u8,
    pub length: Num,
    pub net_class: Option<u8>,
}

#[derive(Debug, Arbitrary)]
pub struct Group {
    pub skew_budget: Num,
    pub a: Vec<Segment>,
    pub b: Vec<Segment>,
}

#[derive(Debug)]
pub struct Board {
    pub layer_count: usize,
    /// Alternate dielectric and copper (the usual build) or take the kinds
    /// as drawn.
    pub alternate: bool,
    pub layers: Vec<Layer>,
    pub materials: Vec<Material>,
    pub foils: Vec<Foil>,
    pub classes: Vec<NetClass>,
    pub groups: Vec<Group>,
    pub board_thickness: Option<(Num, Option<Num>)>,
}

impl<'a> Arbitrary<'a> for Board {
    fn arbitrary(u: &mut Unstructured<'a>) -> Result<Self> {
        let layer_count = u.int_in_range(1..=200usize)?;
        let alternate = u.ratio(7, 8)?;
        let n_specs = u.int_in_range(1..=12usize)?;
        let layers = (0..n_specs)
            .map(|_| Layer::arbitrary(u))
            .collect::<Result<_>>()?;
        let n_mat = u.int_in_range(1..=3usize)?;
        let materials = (0..n_mat)
            .map(|_| Material::arbitrary(u))
            .collect::<Result<_>>()?;
        let n_foil = u.int_in_range(0..=2usize)?;
        let foils = (0..n_foil)
            .map(|_| Foil::arbitrary(u))
            .collect::<Result<_>>()?;
        let n_class = u.int_in_range(0..=4usize)?;
        let classes = (0..n_class)
            .map(|_| NetClass::arbitrary(u))
            .collect::<Result<_>>()?;
        let n_group = u.int_in_range(0..=1usize)?;
        let groups = (0..n_group)
            .map(|_| Group::arbitrary(u))
            .collect::<Result<_>>()?;
        Ok(Board {
            layer_count,
            alternate,
            layers,
            materials,
            foils,
            classes,
            groups,
            board_thickness: Option::arbitrary(u)?,
        })
    }
}

fn face_yaml(out: &mut String, key: &str, f: &Face, n_foil: usize) {
    let side = ["treated", "drum", "bond-treatment"][usize::from(f.side) % 3];
    write!(out, ", {key}: {{side: {side}").unwrap();
    match (f.foil, n_foil) {
        (Some(i), n) if n > 0 => write!(out, ", foil: f{}", usize::from(i) % n).unwrap(),
        _ => {
            if let Some(rz) = f.rz {
                write!(out, ", rz: {}", quantity(rz, ROUGH)).unwrap();
            }
            if let Some(rq) = f.rq {
                write!(out, ", rq: {}", quantity(rq, ROUGH)).unwrap();
            }
        }
    }
    out.push('}');
}

impl Board {
    /// The board as stackup YAML text.
    pub fn to_yaml(&self) -> String {
        let mut y = String::from("stackup-lint: 1\nboard: fuzz board (generated)\nmaterials:\n");
        for (i, m) in self.materials.iter().enumerate() {
            writeln!(y, "  m{i}:").unwrap();
            writeln!(y, "    dk: {}", quantity(m.dk, DK)).unwrap();
            writeln!(y, "    df: {}", quantity(m.df, DF)).unwrap();
            writeln!(y, "    frequency: {}", quantity(m.frequency, FREQ)).unwrap();
            if let Some(v) = m.valid_from {
                writeln!(y, "    valid-from: {}", quantity(v, FREQ)).unwrap();
            }
            if let Some(v) = m.valid_to {
                writeln!(y, "    valid-to: {}", quantity(v, FREQ)).unwrap();
            }
            if let Some(v) = m.dk_tolerance {
                writeln!(y, "    dk-tolerance: {}", quantity(v, DF)).unwrap();
            }
            let method = ["resonator", "transmission-line", "unknown"][usize::from(m.method) % 3];
            writeln!(y, "    method: {method}").unwrap();
        }
        if !self.foils.is_empty() {
            y.push_str("foils:\n");
            for (i, f) in self.foils.iter().enumerate() {
                writeln!(y, "  f{i}:").unwrap();
                if let Some(v) = f.rz {
                    writeln!(y, "    rz: {}", quantity(v, ROUGH)).unwrap();
                }
                if let Some(v) = f.rq {
                    writeln!(y, "    rq: {}", quantity(v, ROUGH)).unwrap();
                }
                if f.rz.is_none() && f.rq.is_none() {
                    writeln!(y, "    notes: no roughness given").unwrap();
                }
            }
        }
        y.push_str("layers:\n");
        let mut copper_names = Vec::new();
        let mut all_names = Vec::new();
        let n_mat = self.materials.len();
        let n_foil = self.foils.len();
        for i in 0..self.layer_count {
            // Alternating builds start and end on dielectric (solder mask
            // or core) and pick from the drawn specs of the right kind.
            let want_copper = i % 2 == 1;
            let spec = if self.alternate {
                let of_kind: Vec<&Layer> = self
                    .layers
                    .iter()
                    .filter(|l| matches!(l, Layer::Copper { .. }) == want_copper)
                    .collect();
                if of_kind.is_empty() {
                    &self.layers[i % self.layers.len()]
                } else {
                    of_kind[i % of_kind.len()]
                }
            } else {
                &self.layers[i % self.layers.len()]
            };
            match spec {
                Layer::Dielectric {
                    kind,
                    material,
                    thickness,
                    pressed,
                    resin_content,
                    modelled_dk,
                } => {
                    let name = format!("D{i}");
                    let kind =
                        ["core", "prepreg", "bonding-film", "solder-mask"][usize::from(*kind) % 4];
                    let key = if *pressed {
                        "thickness"
                    } else {
                        "nominal-thickness"
                    };
                    write!(
                        y,
                        "  - name: {name}\n    dielectric: {{kind: {kind}, material: m{}, {key}: {}",
                        usize::from(*material) % n_mat,
                        quantity(*thickness, THICK)
                    )
                    .unwrap();
                    if let Some(v) = resin_content {
                        write!(y, ", resin-content: {}", quantity(*v, FRACTION)).unwrap();
                    }
                    if let Some(v) = modelled_dk {
                        write!(y, ", modelled-dk: {}", quantity(*v, DK)).unwrap();
                    }
                    y.push_str("}\n");
                    all_names.push(name);
                }
                Layer::Copper {
                    role,
                    thickness,
                    ounces,
                    fill,
                    plated,
                    up,
                    down,
                } => {
                    let name = format!("L{i}");
                    let role = ["signal", "plane", "mixed"][usize::from(*role) % 3];
                    let t = if *ounces {
                        format!("\"{} oz\"", number_text(*thickness, ETCH))
                    } else {
                        quantity(*thickness, THICK)
                    };
                    write!(
                        y,
                        "  - name: {name}\n    copper: {{role: {role}, thickness: {t}, plated: {plated}"
                    )
                    .unwrap();
                    if let Some(v) = fill {
                        write!(y, ", fill: {}", quantity(*v, FRACTION)).unwrap();
                    }
                    if let Some(f) = up {
                        face_yaml(&mut y, "up", f, n_foil);
                    }
                    if let Some(f) = down {
                        face_yaml(&mut y, "down", f, n_foil);
                    }
                    y.push_str("}\n");
                    copper_names.push(name.clone());
                    all_names.push(name);
                }
            }
        }
        let copper = |i: u8| -> String {
            if copper_names.is_empty() {
                all_names[usize::from(i) % all_names.len()].clone()
            } else {
                copper_names[usize::from(i) % copper_names.len()].clone()
            }
        };
        if !self.classes.is_empty() {
            y.push_str("net-classes:\n");
        }
        for (i, c) in self.classes.iter().enumerate() {
            let structure = [
                "microstrip",
                "embedded-microstrip",
                "stripline",
                "diff-microstrip",
                "diff-stripline",
                "grounded-coplanar",
            ][usize::from(c.structure) % 6];
            writeln!(y, "  - name: c{i}\n    structure: {structure}").unwrap();
            writeln!(y, "    layer: {}", copper(c.layer)).unwrap();
            if let Some((a, b)) = c.references {
                writeln!(y, "    references: [{}, {}]", copper(a), copper(b)).unwrap();
            }
            writeln!(y, "    width: {}", quantity(c.width, WIDTH)).unwrap();
            if let Some(v) = c.top_width {
                writeln!(y, "    top-width: {}", quantity(v, WIDTH)).unwrap();
            }
            if let Some(v) = c.etch_factor {
                writeln!(y, "    etch-factor: {}", quantity(v, ETCH)).unwrap();
            }
            if let Some(v) = c.spacing {
                writeln!(y, "    spacing: {}", quantity(v, WIDTH)).unwrap();
            }
            if let Some(v) = c.gap {
                writeln!(y, "    gap: {}", quantity(v, WIDTH)).unwrap();
            }
            write!(y, "    impedance: {{target: {}", quantity(c.target, OHM)).unwrap();
            if let Some(v) = c.tolerance {
                write!(y, ", tolerance: \"{} %\"", number_text(v, FREQ)).unwrap();
            }
            y.push_str("}\n");
            if let Some(v) = c.max_frequency {
                writeln!(y, "    max-frequency: {}", quantity(v, FREQ)).unwrap();
            }
            if let Some((v, pam4)) = c.data_rate {
                writeln!(y, "    data-rate: {}", quantity(v, RATE)).unwrap();
                writeln!(y, "    modulation: {}", if pam4 { "pam4" } else { "nrz" }).unwrap();
            }
            if let Some(v) = c.assumed_dk {
                writeln!(y, "    assumed-dk: {}", quantity(v, DK)).unwrap();
            }
            if let Some(v) = c.via_fence_pitch {
                writeln!(y, "    via-fence-pitch: {}", quantity(v, WIDTH)).unwrap();
            }
            if let Some(v) = c.launch_valid_to {
                writeln!(y, "    launch-valid-to: {}", quantity(v, FREQ)).unwrap();
            }
        }
        if !self.groups.is_empty() {
            y.push_str("matched-groups:\n");
        }
        for (i, g) in self.groups.iter().enumerate() {
            writeln!(
                y,
                "  - name: g{i}\n    skew-budget: {}\n    nets:",
                quantity(g.skew_budget, SKEW)
            )
            .unwrap();
            for (n, segs) in [&g.a, &g.b].into_iter().enumerate() {
                writeln!(y, "      - name: n{n}\n        segments:").unwrap();
                if segs.is_empty() {
                    y.push_str("          []\n");
                }
                for s in segs.iter().take(4) {
                    write!(
                        y,
                        "          - {{layer: {}, length: {}",
                        copper(s.layer),
                        quantity(s.length, LENGTH_MM)
                    )
                    .unwrap();
                    if let (Some(c), false) = (s.net_class, self.classes.is_empty()) {
                        write!(y, ", net-class: c{}", usize::from(c) % self.classes.len()).unwrap();
                    }
                    y.push_str("}\n");
                }
            }
        }
        if let Some((t, tol)) = self.board_thickness {
            write!(
                y,
                "settings:\n  board-thickness: {{target: {}",
                quantity(t, LENGTH_MM)
            )
            .unwrap();
            if let Some(v) = tol {
                write!(y, ", tolerance: \"{} %\"", number_text(v, FREQ)).unwrap();
            }
            y.push_str("}\n");
        }
        y
    }
}
