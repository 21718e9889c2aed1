//! Measured test coupons (`coupons:`): which net class each represents,
//! its kind, lengths and Touchstone files. The files themselves are read
//! by the loader (confined to the project root like libraries) and parsed
//! into [`CouponFile::network`].

use std::collections::BTreeMap;

use super::reader::{fmt_freq, fmt_len, Reader};
use super::*;
use crate::input::touchstone::Network;
use crate::input::yaml::Node;
use crate::units::Dimension;

/// A measured test coupon.
#[derive(Debug, Clone, PartialEq)]
pub struct Coupon {
    pub name: String,
    pub pointer: String,
    /// Index into `Stackup::net_classes` of the structure it represents.
    pub net_class: usize,
    pub kind: CouponKind,
    /// The range the user trusts the data over, Hz (`trust-from`,
    /// `trust-to`); the data's own limits may narrow it.
    pub trust: (Option<f64>, Option<f64>),
    /// The Touchstone files, in the order the kind needs them.
    pub files: Vec<CouponFile>,
}

/// What a coupon is.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum CouponKind {
    /// Two lines of the same structure and launches, different lengths
    /// (m): the two-line method.
    LinePair { lengths: [f64; 2] },
    /// A gap-coupled resonator of `length` (m) with coupling gaps `gap`
    /// (m) at both ends.
    Resonator { length: f64, gap: f64 },
}

impl CouponKind {
    pub fn keyword(&self) -> &'static str {
        match self {
            CouponKind::LinePair { .. } => "line-pair",
            CouponKind::Resonator { .. } => "resonator",
        }
    }
}

/// One Touchstone file of a coupon.
#[derive(Debug, Clone, PartialEq)]
pub struct CouponFile {
    /// The path as written, relative to the stackup file.
    pub path: String,
    /// JSON pointer of the entry naming it.
    pub pointer: String,
    /// The parsed file (filled in by the loader; `None` before).
    pub network: Option<Network>,
}

impl Coupon {
    /// Whether the parsed files fit the coupon and its net class: the port
    /// count of its structure (two for a single line, four for a pair),
    /// one frequency grid and one set of reference impedances for all
    /// files. On a misfit: the index of the file at fault and why.
    pub fn check_files(&self, pair: bool) -> Result<(), (usize, String)> {
        let ports = if pair { 4 } else { 2 };
        let nets: Vec<(usize, &Network)> = self
            .files
            .iter()
            .enumerate()
            .filter_map(|(i, f)| Some((i, f.network.as_ref()?)))
            .collect();
        for &(i, n) in &nets {
            if n.ports != ports {
                return Err((
                    i,
                    format!(
                        "it has {} ports, and a coupon of a {} needs {ports}",
                        n.ports,
                        if pair { "pair" } else { "single line" }
                    ),
                ));
            }
        }
        let Some(&(_, first)) = nets.first() else {
            return Ok(());
        };
        for &(i, n) in &nets[1..] {
            let differs = if n.frequencies.len() != first.frequencies.len() {
                Some(format!(
                    "it has {} frequency points and the coupon's first file {}",
                    n.frequencies.len(),
                    first.frequencies.len()
                ))
            } else {
                n.frequencies
                    .iter()
                    .zip(&first.frequencies)
                    .find(|(x, y)| (*x - *y).abs() > 1e-9 * y.abs().max(1.0))
                    .map(|(x, y)| {
                        format!(
                            "its sweep differs from the coupon's first file's ({} where that has {})",
                            crate::units::fmt_frequency(*x),
                            crate::units::fmt_frequency(*y)
                        )
                    })
            };
            if let Some(why) = differs {
                return Err((i, format!("{why}; measure both lines over one sweep")));
            }
            if n.reference != first.reference {
                return Err((
                    i,
                    "its reference impedances differ from the coupon's first file's".into(),
                ));
            }
        }
        Ok(())
    }
}

pub(super) fn read_coupons(r: &mut Reader<'_>, s: &Stackup) -> Vec<Coupon> {
    let n = r
        .node("/coupons")
        .and_then(Node::as_seq)
        .map_or(0, <[Node]>::len);
    let mut out = Vec::new();
    let mut names: BTreeMap<String, String> = BTreeMap::new();
    for i in 0..n {
        let ptr = format!("/coupons/{i}");
        let name = r.string(&format!("{ptr}/name")).unwrap_or_default();
        if r.skip.contains(&ptr) {
            r.unusable.insert(name);
            continue;
        }
        let errors_before = r.errors.len();
        if let Some(first) = names.insert(name.clone(), ptr.clone()) {
            let first = r.line_of(&first);
            r.error(
                &format!("{ptr}/name"),
                format!("coupon `{name}` is defined twice (first at line {first})"),
                "duplicate coupon",
                None,
            );
        }
        if let Some(c) = read_coupon(r, s, &ptr, name) {
            if r.errors.len() == errors_before {
                out.push(c);
            }
        }
    }
    out
}

fn read_coupon(r: &mut Reader<'_>, s: &Stackup, ptr: &str, name: String) -> Option<Coupon> {
    let class_ptr = format!("{ptr}/net-class");
    let class_name = r.string(&class_ptr).unwrap_or_default();
    let net_class = s.net_classes.iter().position(|c| c.name == class_name);
    if net_class.is_none() && !r.unusable.contains(&class_name) {
        r.error(
            &class_ptr,
            format!("there is no net class named `{class_name}`"),
            "unknown net class",
            Some(crate::suggest::help_for(
                &class_name,
                s.net_classes.iter().map(|c| c.name.as_str()),
                || "a coupon names the net class whose structure it measures".into(),
            )),
        );
    }
    let files_ptr = format!("{ptr}/files");
    let nf = r
        .node(&files_ptr)
        .and_then(Node::as_seq)
        .map_or(0, <[Node]>::len);
    let files: Vec<CouponFile> = (0..nf)
        .filter_map(|j| {
            let p = format!("{files_ptr}/{j}");
            Some(CouponFile {
                path: r.string(&p)?,
                pointer: p,
                network: None,
            })
        })
        .collect();
    let length = |r: &mut Reader<'_>, p: &str, what: &str| {
        r.bounded(p, Dimension::Length, what, 0.0, 2.0, fmt_len)
    };
    let kind = match r.string(&format!("{ptr}/kind")).as_deref() {
        Some("line-pair") => {
            let lp = format!("{ptr}/lengths");
            let nl = r.node(&lp).and_then(Node::as_seq).map_or(0, <[Node]>::len);
            if nl != 2 || files.len() != 2 {
                r.error(
                    if nl != 2 { &lp } else { &files_ptr },
                    format!(
                        "a line-pair coupon has two files and two lengths (short and long line), found {} and {nl}",
                        files.len()
                    ),
                    "needs two of each",
                    Some("files: [short.s2p, long.s2p], lengths: [25 mm, 75 mm]".into()),
                );
                None
            } else {
                let a = length(r, &format!("{lp}/0"), "coupon line length");
                let b = length(r, &format!("{lp}/1"), "coupon line length");
                match (a, b) {
                    (Some(a), Some(b)) if (b - a).abs() < 1e-3 * a.max(b) => {
                        r.error(
                            &lp,
                            format!(
                                "the two lines of a line-pair coupon must differ in length ({} and {})",
                                fmt_len(a),
                                fmt_len(b)
                            ),
                            "equal lengths",
                            Some("the method measures the difference of the two lines".into()),
                        );
                        None
                    }
                    (Some(a), Some(b)) => Some(CouponKind::LinePair { lengths: [a, b] }),
                    _ => None,
                }
            }
        }
        Some("resonator") => {
            if files.len() != 1 {
                r.error(
                    &files_ptr,
                    format!(
                        "a resonator coupon has one two-port file, found {}",
                        files.len()
                    ),
                    "needs one file",
                    None,
                );
                None
            } else {
                let l = length(r, &format!("{ptr}/length"), "resonator length");
                let g = r.bounded(
                    &format!("{ptr}/gap"),
                    Dimension::Length,
                    "coupling gap",
                    0.0,
                    10e-3,
                    fmt_len,
                );
                match (l, g) {
                    (Some(length), Some(gap)) => Some(CouponKind::Resonator { length, gap }),
                    _ => None,
                }
            }
        }
        _ => None,
    };
    let freq = |r: &mut Reader<'_>, key: &str| -> Option<Option<f64>> {
        let p = format!("{ptr}/{key}");
        if r.node(&p).is_none() {
            return Some(None);
        }
        r.bounded(&p, Dimension::Frequency, key, 0.0, 2e12, fmt_freq)
            .map(Some)
    };
    let from = freq(r, "trust-from");
    let to = freq(r, "trust-to");
    if let (Some(Some(a)), Some(Some(b))) = (from, to) {
        if a >= b {
            r.error(
                &format!("{ptr}/trust-to"),
                format!(
                    "trust-to {} is not above trust-from {}",
                    fmt_freq(b),
                    fmt_freq(a)
                ),
                "empty range",
                None,
            );
            return None;
        }
    }
    Some(Coupon {
        name,
        pointer: ptr.to_string(),
        net_class: net_class?,
        kind: kind?,
        trust: (from?, to?),
        files,
    })
}
