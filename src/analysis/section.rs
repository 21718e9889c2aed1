//! Build the 2-D cross-section of a net class from the stackup: which
//! dielectrics lie between the trace and its planes, what fills the copper
//! slot around the trace, the etch profile, and the rough copper faces.

use stackup_physics::fieldsolver::{
    CoplanarGrounds, CrossSection, DielectricBlock, DielectricLayer, Trace,
};
use stackup_physics::roughness::{RoughLossModel, RoughSurface};

use crate::model::{DielectricKind, Face, LayerKind, MaskCoat, NetClass, Stackup, Structure};

/// Roughness of one copper face as the analysis carries it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum FaceRoughness {
    /// No face data given (a ply's contact faces; smooth where a surface
    /// is needed). A line's faces never stay here: they become `Implied`.
    NotDeclared,
    Known(RoughSurface),
    /// A bond-enhancement treatment with no data: a best/worst range.
    Unknown,
    /// A line's face with no data: the best/worst range of the generic
    /// surface its position in the build implies, never silently smooth.
    Implied(GenericFace),
}

/// What an undeclared copper face most likely is, from where it sits.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum GenericFace {
    /// A foil's bonding side: the face against a core, or an outer layer's
    /// face against its prepreg. Low-profile to standard foil.
    Foil,
    /// A surface the fabricator treats: an inner layer's face against
    /// prepreg (bond enhancement), or an outer surface under solder mask
    /// or in air (cleaned and micro-etched before mask).
    Treated,
}

impl GenericFace {
    /// The surface in the best (smoothest) or worst case (constants and
    /// their provenance in `stackup_physics::roughness`).
    pub fn surface(self, worst: bool) -> RoughSurface {
        use stackup_physics::roughness::{
            BOND_TREATMENT_UNKNOWN_BEST, BOND_TREATMENT_UNKNOWN_WORST, LOW_PROFILE_FOIL,
            STANDARD_ED_FOIL,
        };
        match (self, worst) {
            (GenericFace::Foil, false) => LOW_PROFILE_FOIL,
            (GenericFace::Foil, true) => STANDARD_ED_FOIL,
            (GenericFace::Treated, false) => BOND_TREATMENT_UNKNOWN_BEST,
            (GenericFace::Treated, true) => BOND_TREATMENT_UNKNOWN_WORST,
        }
    }

    /// In words, with the range carried.
    pub fn describe(self) -> &'static str {
        match self {
            GenericFace::Foil => {
                "foil of unknown profile, carried as low-profile (Rz 2 µm) to standard (Rz 9 µm)"
            }
            GenericFace::Treated => "treated copper of unknown roughness, carried as Rz 1 to 5 µm",
        }
    }
}

impl FaceRoughness {
    pub fn of(face: Option<&Face>) -> FaceRoughness {
        match face {
            None => FaceRoughness::NotDeclared,
            Some(f) => match f.roughness {
                Some(r) => FaceRoughness::Known(RoughSurface { rq: r.rq, rz: r.rz }),
                None => FaceRoughness::Unknown,
            },
        }
    }

    /// The surface in the best (smoothest) or worst case.
    pub fn surface(self, worst: bool) -> RoughSurface {
        use stackup_physics::roughness::{
            BOND_TREATMENT_UNKNOWN_BEST, BOND_TREATMENT_UNKNOWN_WORST,
        };
        match self {
            FaceRoughness::NotDeclared => RoughSurface::SMOOTH,
            FaceRoughness::Known(s) => s,
            FaceRoughness::Unknown if worst => BOND_TREATMENT_UNKNOWN_WORST,
            FaceRoughness::Unknown => BOND_TREATMENT_UNKNOWN_BEST,
            FaceRoughness::Implied(g) => g.surface(worst),
        }
    }

    /// Carried as a best/worst range (no data for the face).
    pub fn is_range(self) -> bool {
        matches!(self, FaceRoughness::Unknown | FaceRoughness::Implied(_))
    }
}

/// The generic surface an undeclared face of copper layer `layer` implies,
/// the face pointing up the board (`up`) or down: against a core, a foil's
/// bonding side; against prepreg, a foil's bonding side on an outer layer
/// (foil lamination) and a bond-enhancement treatment on an inner one;
/// under solder mask or in air, a cleaned and micro-etched surface (common
/// practice, no source).
pub fn implied_face(s: &Stackup, layer: usize, up: bool) -> GenericFace {
    let toward = if up {
        layer.checked_sub(1)
    } else {
        Some(layer + 1)
    };
    let away = if up {
        Some(layer + 1)
    } else {
        layer.checked_sub(1)
    };
    let kind = |j: Option<usize>| j.and_then(|j| s.dielectric(j)).map(|d| d.kind);
    match kind(toward) {
        Some(DielectricKind::Core) => GenericFace::Foil,
        Some(DielectricKind::Prepreg) => match kind(away) {
            None | Some(DielectricKind::SolderMask) => GenericFace::Foil,
            _ => GenericFace::Treated,
        },
        _ => GenericFace::Treated,
    }
}

/// Which of the four copper faces a line's field meets (in the frame where
/// the solver's first plane is below).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FaceRole {
    PlaneBelow,
    TraceBottom,
    TraceTop,
    PlaneAbove,
}

impl FaceRole {
    /// The slot of this face's roughness layer in `RoughLayers::thickness`.
    pub fn slot(self) -> usize {
        self as usize
    }

    pub fn is_trace(self) -> bool {
        matches!(self, FaceRole::TraceBottom | FaceRole::TraceTop)
    }

    pub fn is_plane(self) -> bool {
        !self.is_trace()
    }

    pub fn as_str(self) -> &'static str {
        match self {
            FaceRole::PlaneBelow => "plane below",
            FaceRole::TraceBottom => "trace bottom",
            FaceRole::TraceTop => "trace top",
            FaceRole::PlaneAbove => "plane above",
        }
    }
}

/// One of the (up to) four copper faces a line's field meets.
#[derive(Debug, Clone, PartialEq)]
pub struct LineFace {
    pub role: FaceRole,
    /// Copper layer index and the JSON pointer of its face (if declared).
    pub layer: usize,
    pub pointer: Option<String>,
    pub roughness: FaceRoughness,
    /// The roughness loss factor its conductor loss uses.
    pub loss_model: RoughLossModel,
}

/// A horizontal slab of the section, bottom to top in the solver frame.
#[derive(Debug, Clone, PartialEq)]
pub struct Slab {
    pub thickness: f64,
    pub eps: f64,
    /// The stackup layer it comes from.
    pub layer: usize,
    /// The dielectric layer whose material fills it: `layer` itself for a
    /// dielectric, the resin, mask or core that fills a copper slot, `None`
    /// for air.
    pub material: Option<usize>,
}

/// A conformal solder-mask coat over an outer layer's traces (solver
/// frame: on the open side, above the trace's copper slot).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MaskGeometry {
    /// The solder-mask layer.
    pub layer: usize,
    pub eps: f64,
    /// Coat on the bare laminate, and on the copper's tops and sides
    /// (the side coat is taken as thick as the top coat: common practice,
    /// no source).
    pub over_laminate: f64,
    pub over_copper: f64,
}

/// The geometry of a net class's line, before roughness.
#[derive(Debug, Clone, PartialEq)]
pub struct LineGeometry {
    /// Slabs from the first reference plane upwards (solver frame).
    pub slabs: Vec<Slab>,
    /// A conformal solder-mask coat over the traces (not among the slabs).
    pub mask: Option<MaskGeometry>,
    /// Index into `slabs` of the copper slot holding the trace.
    pub trace_slot: usize,
    pub bottom_plane: usize,
    pub top_plane: Option<usize>,
    /// The solver frame is the board turned upside down (plane above the trace).
    pub flipped: bool,
    pub width_bottom: f64,
    pub width_top: f64,
    pub thickness: f64,
    pub spacing: Option<f64>,
    pub gap: Option<f64>,
    pub faces: Vec<LineFace>,
    /// Notes on how the section was built (approximations taken).
    pub notes: Vec<String>,
    /// The section differs from the declared structure (a plane is
    /// missing or extra); `missing-reference-plane` reports why.
    pub structure_fallback: bool,
}

impl LineGeometry {
    /// The reference planes the section was solved over, as layer
    /// indices from the top of the board down.
    pub fn reference_layers(&self) -> Vec<usize> {
        let mut r: Vec<usize> = std::iter::once(self.bottom_plane)
            .chain(self.top_plane)
            .collect();
        r.sort_unstable();
        r
    }

    /// Height of the trace's bottom face above the first plane.
    pub fn y_trace(&self) -> f64 {
        self.slabs[..self.trace_slot]
            .iter()
            .map(|s| s.thickness)
            .sum()
    }

    /// Total height between the planes (or to the board surface when open).
    pub fn height(&self) -> f64 {
        self.slabs.iter().map(|s| s.thickness).sum()
    }

    /// Dielectric between the trace and the first plane.
    pub fn h_below(&self) -> f64 {
        self.y_trace()
    }

    /// Stackup layer indices of every layer the section is made of: its
    /// slabs (copper slots included) and a conformal mask coat.
    pub fn dielectric_layers(&self) -> impl Iterator<Item = usize> + '_ {
        self.slabs
            .iter()
            .map(|s| s.layer)
            .chain(self.mask.map(|m| m.layer))
    }

    /// Stackup layer indices of the dielectrics below and above the trace.
    pub fn dielectrics_below(&self) -> Vec<usize> {
        self.slabs[..self.trace_slot]
            .iter()
            .map(|s| s.layer)
            .collect()
    }

    pub fn dielectrics_above(&self) -> Vec<usize> {
        self.slabs[self.trace_slot + 1..]
            .iter()
            .map(|s| s.layer)
            .collect()
    }
}

/// Why a net class has no computable cross-section.
#[derive(Debug, Clone, PartialEq)]
pub struct SectionError(pub String);

/// Build the line geometry of `nc`; `eps_of(layer)` gives each dielectric
/// layer's Dk at the analysis frequency.
pub fn geometry(
    s: &Stackup,
    nc: &NetClass,
    eps_of: &dyn Fn(usize) -> f64,
) -> Result<LineGeometry, SectionError> {
    let i = nc.layer_index;
    let trace = s
        .copper(i)
        .ok_or_else(|| SectionError(format!("layer `{}` is not copper", nc.layer)))?;
    let pick = |above: bool| -> Option<usize> {
        // Named references count only where they are planes; a wrong name
        // is reported by `missing-reference-plane` and the real plane used.
        if let Some(refs) = &nc.references {
            let r = refs
                .iter()
                .copied()
                .filter(|&r| s.copper(r).is_some_and(|c| c.role.is_reference()))
                .filter(|&r| if above { r < i } else { r > i });
            let named = if above { r.max() } else { r.min() };
            if named.is_some() {
                return named;
            }
        }
        if above {
            s.reference_above(i)
        } else {
            s.reference_below(i)
        }
    };
    let (ra, rb) = (pick(true), pick(false));
    let mut notes = Vec::new();
    // Choose the frame: the first plane is "below" in the solver.
    let (first, second, flipped) = if nc.structure.is_stripline() {
        match (rb, ra) {
            (Some(b), Some(a)) => (b, Some(a), false),
            (Some(b), None) => {
                notes.push("no plane above: solved as an embedded microstrip".into());
                (b, None, false)
            }
            (None, Some(a)) => {
                notes.push("no plane below: solved as an embedded microstrip".into());
                (a, None, true)
            }
            (None, None) => {
                return Err(SectionError(format!(
                    "no reference plane above or below `{}`",
                    nc.layer
                )))
            }
        }
    } else {
        // Microstrip-like: the plane on the side facing the open surface.
        let copper_above = (0..i).any(|j| s.copper(j).is_some());
        let copper_below = (i + 1..s.layers.len()).any(|j| s.copper(j).is_some());
        match (rb, ra) {
            (None, None) => {
                return Err(SectionError(format!(
                    "no reference plane next to `{}`",
                    nc.layer
                )))
            }
            (Some(b), None) => (b, None, false),
            (None, Some(a)) => (a, None, true),
            (Some(b), Some(a)) => {
                if !copper_above || nc.structure == Structure::EmbeddedMicrostrip {
                    (b, None, false)
                } else if !copper_below {
                    (a, None, true)
                } else {
                    notes.push("planes on both sides: solved as a stripline".into());
                    (b, Some(a), false)
                }
            }
        }
    };
    // Board-frame index walk from the first plane through the trace to the
    // second plane (or the board surface).
    let step: isize = if flipped { 1 } else { -1 };
    let end: isize = match second {
        Some(p) => p as isize,
        None => {
            if flipped {
                s.layers.len() as isize
            } else {
                -1
            }
        }
    };
    let mut order = Vec::new();
    let mut k = first as isize + step;
    while k != end {
        order.push(k as usize);
        k += step;
    }
    // Fill of a copper slot: the neighbouring prepreg (resin flows into the
    // etched copper), else solder mask, else the neighbour on the open side.
    let fill_eps = |j: usize| -> (f64, Option<usize>) {
        let nb = [j.checked_sub(1), Some(j + 1)];
        let mut best: Option<(u8, usize)> = None;
        for n in nb.into_iter().flatten() {
            if let Some(d) = s.dielectric(n) {
                let rank = match d.kind {
                    DielectricKind::Prepreg | DielectricKind::BondingFilm => 3,
                    DielectricKind::SolderMask => 2,
                    DielectricKind::Core => 1,
                };
                if best.is_none_or(|(r, _)| rank > r) {
                    best = Some((rank, n));
                }
            }
        }
        best.map_or((1.0, None), |b| (eps_of(b.1), Some(b.1)))
    };
    let mut slabs = Vec::new();
    let mut trace_slot = None;
    let mut skip_mask: Option<usize> = None;
    let mut mask: Option<MaskGeometry> = None;
    let mut mask_opened = false;
    for &j in &order {
        match &s.layers[j].kind {
            // A conformal coat (or an opened mask) is not a slab: see `mask`.
            LayerKind::Dielectric(_) if Some(j) == skip_mask => {}
            LayerKind::Dielectric(d) => slabs.push(Slab {
                thickness: d.thickness,
                eps: eps_of(j),
                layer: j,
                material: Some(j),
            }),
            LayerKind::Copper(c) => {
                if j == i {
                    trace_slot = Some(slabs.len());
                    // Open side (outer layer): solder mask fills around the
                    // trace if the next layer out is mask, else air.
                    let (eps, material) = if second.is_none() {
                        let pos = order.iter().position(|&x| x == j).unwrap_or(0);
                        match order
                            .get(pos + 1)
                            .and_then(|&n| s.dielectric(n).map(|d| (n, d)))
                        {
                            Some((n, d)) if d.kind == DielectricKind::SolderMask => {
                                match (nc.mask_open, d.mask) {
                                    (true, _) => {
                                        mask_opened = true;
                                        skip_mask = Some(n);
                                        notes.push(format!(
                                            "solder mask `{}` opened over the traces (`mask: open`): no mask in the section",
                                            s.layers[n].name
                                        ));
                                        (1.0, None)
                                    }
                                    (
                                        false,
                                        Some(MaskCoat::Conformal {
                                            over_laminate,
                                            over_copper,
                                        }),
                                    ) => {
                                        skip_mask = Some(n);
                                        mask = Some(MaskGeometry {
                                            layer: n,
                                            eps: eps_of(n),
                                            over_laminate,
                                            over_copper,
                                        });
                                        (1.0, None)
                                    }
                                    _ => (eps_of(n), Some(n)),
                                }
                            }
                            Some(_) => fill_eps(j),
                            None => (1.0, None),
                        }
                    } else {
                        fill_eps(j)
                    };
                    slabs.push(Slab {
                        thickness: c.thickness,
                        eps,
                        layer: j,
                        material,
                    });
                } else {
                    if !c.role.is_reference() {
                        notes.push(format!(
                            "signal layer `{}` inside the section modelled as resin-filled",
                            s.layers[j].name
                        ));
                    }
                    let (eps, material) = fill_eps(j);
                    slabs.push(Slab {
                        thickness: c.thickness,
                        eps,
                        layer: j,
                        material,
                    });
                }
            }
        }
    }
    if nc.mask_open && !mask_opened {
        notes.push(format!(
            "`mask: open` has no effect: no solder mask covers layer `{}`",
            s.layers[i].name
        ));
    }
    let trace_slot = trace_slot
        .ok_or_else(|| SectionError("the trace is not between its reference planes".into()))?;
    // Etch profile: the base is on the laminate (core) the foil came with.
    let below_is_core = trace_slot > 0
        && s.dielectric(slabs[trace_slot - 1].layer)
            .is_some_and(|d| d.kind == DielectricKind::Core);
    let above_is_core = slabs.get(trace_slot + 1).is_some_and(|sl| {
        s.dielectric(sl.layer)
            .is_some_and(|d| d.kind == DielectricKind::Core)
    });
    let base_up = above_is_core && !below_is_core;
    let top = nc.top_width.unwrap_or(nc.width);
    let (width_bottom, width_top) = if base_up {
        (top, nc.width)
    } else {
        (nc.width, top)
    };
    // Faces, in the solver frame.
    let (face_lo, face_hi) = if flipped {
        (trace.up.as_ref(), trace.down.as_ref())
    } else {
        (trace.down.as_ref(), trace.up.as_ref())
    };
    let mut faces = Vec::new();
    // A face without data carries the range its position implies.
    let line_face = |layer: usize, up: bool, f: Option<&Face>| match FaceRoughness::of(f) {
        FaceRoughness::NotDeclared => FaceRoughness::Implied(implied_face(s, layer, up)),
        r => r,
    };
    let model_of = |f: Option<&Face>| {
        f.and_then(|f| f.roughness.map(|r| r.loss_model))
            .unwrap_or_default()
    };
    let face_of =
        |layer: usize, up_in_frame: bool| -> (Option<String>, FaceRoughness, RoughLossModel) {
            let c = s.copper(layer);
            // up_in_frame: the face pointing up in the solver frame.
            let up = up_in_frame != flipped;
            let f = c.and_then(|c| if up { c.up.as_ref() } else { c.down.as_ref() });
            (
                f.map(|f| f.pointer.clone()),
                line_face(layer, up, f),
                model_of(f),
            )
        };
    let (p, r, m) = face_of(first, true);
    faces.push(LineFace {
        role: FaceRole::PlaneBelow,
        layer: first,
        pointer: p,
        roughness: r,
        loss_model: m,
    });
    faces.push(LineFace {
        role: FaceRole::TraceBottom,
        layer: i,
        pointer: face_lo.map(|f| f.pointer.clone()),
        roughness: line_face(i, flipped, face_lo),
        loss_model: model_of(face_lo),
    });
    faces.push(LineFace {
        role: FaceRole::TraceTop,
        layer: i,
        pointer: face_hi.map(|f| f.pointer.clone()),
        roughness: line_face(i, !flipped, face_hi),
        loss_model: model_of(face_hi),
    });
    if let Some(sp) = second {
        let (p, r, m) = face_of(sp, false);
        faces.push(LineFace {
            role: FaceRole::PlaneAbove,
            layer: sp,
            pointer: p,
            roughness: r,
            loss_model: m,
        });
    }
    Ok(LineGeometry {
        slabs,
        mask,
        trace_slot,
        bottom_plane: first,
        top_plane: second,
        flipped,
        width_bottom,
        width_top,
        thickness: trace.thickness,
        spacing: nc.spacing,
        gap: if nc.structure == Structure::GroundedCoplanar {
            nc.gap
        } else {
            None
        },
        faces,
        structure_fallback: notes
            .iter()
            .any(|n| n.starts_with("no plane") || n.starts_with("planes on both")),
        notes,
    })
}

/// Roughness layers to paint on the faces: thickness per face (same order
/// as `LineGeometry::faces`) and the layer permittivity factor.
#[derive(Debug, Clone, PartialEq)]
pub struct RoughLayers {
    pub thickness: Vec<f64>,
    /// eps_rough / eps_bulk.
    pub eps_factor: f64,
}

/// The solver cross-section of a geometry, with optional roughness layers.
pub fn cross_section(g: &LineGeometry, rough: Option<&RoughLayers>) -> CrossSection {
    cross_section_owned(g, rough).0
}

/// [`cross_section`] and, for each of its blocks, the dielectric layer
/// whose material it is (a mask coat: the mask; a roughness layer: the
/// dielectric it lies in), for weighting loss by material.
pub fn cross_section_owned(
    g: &LineGeometry,
    rough: Option<&RoughLayers>,
) -> (CrossSection, Vec<Option<usize>>) {
    let y_trace = g.y_trace();
    let t = g.thickness;
    let mut layers: Vec<DielectricLayer> = Vec::new();
    // Roughness blocks go after the mask coat, so that a rough trace top
    // under the coat keeps its roughness layer.
    let mut rough_blocks: Vec<(DielectricBlock, Option<usize>)> = Vec::new();
    let tr = |k: usize| {
        rough
            .and_then(|r| r.thickness.get(k).copied())
            .unwrap_or(0.0)
    };
    let factor = rough.map_or(1.0, |r| r.eps_factor);
    // Plane faces: a roughness layer is a full-width block over the plane
    // (not a layer of its own), so that it adds its two mesh lines but no
    // cells-per-layer minimum: the field across a layer a few µm thick is
    // uniform, and the solver's interface averaging takes its permittivity
    // exactly.
    let mut acc = 0.0;
    let n = g.slabs.len();
    let full = 1.0; // m, wider than any box; the solver clamps blocks to it
    for (k, sl) in g.slabs.iter().enumerate() {
        layers.push(DielectricLayer {
            thickness: sl.thickness,
            eps_r: sl.eps,
        });
        let lo = if k == 0 {
            tr(0).min(0.45 * sl.thickness)
        } else {
            0.0
        };
        let hi = if k + 1 == n && g.top_plane.is_some() {
            tr(3).min(0.45 * sl.thickness)
        } else {
            0.0
        };
        if lo > 0.0 {
            rough_blocks.push((
                DielectricBlock {
                    x0: -full,
                    x1: full,
                    y0: acc,
                    y1: acc + lo,
                    eps_r: sl.eps * factor,
                },
                sl.material,
            ));
        }
        if hi > 0.0 {
            rough_blocks.push((
                DielectricBlock {
                    x0: -full,
                    x1: full,
                    y0: acc + sl.thickness - hi,
                    y1: acc + sl.thickness,
                    eps_r: sl.eps * factor,
                },
                sl.material,
            ));
        }
        acc += sl.thickness;
    }
    let conductors: Vec<Trace> = match g.spacing {
        Some(sp) => {
            let pitch = g.width_bottom.max(g.width_top) + sp;
            vec![
                Trace {
                    x_center: -0.5 * pitch,
                    y_bottom: y_trace,
                    width_bottom: g.width_bottom,
                    width_top: g.width_top,
                    thickness: t,
                },
                Trace {
                    x_center: 0.5 * pitch,
                    y_bottom: y_trace,
                    width_bottom: g.width_bottom,
                    width_top: g.width_top,
                    thickness: t,
                },
            ]
        }
        None => vec![Trace {
            x_center: 0.0,
            y_bottom: y_trace,
            width_bottom: g.width_bottom,
            width_top: g.width_top,
            thickness: t,
        }],
    };
    // The conformal mask coat: on the laminate between the traces, over
    // each trace's top and sides, over the coplanar grounds' tops and
    // facing edges. Blocks overlapping copper are harmless (copper nodes
    // are fixed).
    let mut blocks: Vec<(DielectricBlock, Option<usize>)> = Vec::new();
    if let Some(m) = g.mask {
        let owner = Some(m.layer);
        let coat = |x0: f64, x1: f64, y0: f64, y1: f64| {
            (
                DielectricBlock {
                    x0,
                    x1,
                    y0,
                    y1,
                    eps_r: m.eps,
                },
                owner,
            )
        };
        let c = m.over_copper;
        if m.over_laminate > 0.0 {
            blocks.push(coat(-full, full, y_trace, y_trace + m.over_laminate));
        }
        if c > 0.0 {
            for tc in &conductors {
                let half = 0.5 * tc.width_bottom.max(tc.width_top);
                blocks.push(coat(
                    tc.x_center - half - c,
                    tc.x_center + half + c,
                    y_trace,
                    y_trace + t + c,
                ));
            }
            if let Some(gap) = g.gap {
                let outer = conductors
                    .iter()
                    .map(|tc| tc.x_center + 0.5 * tc.width_bottom)
                    .fold(f64::NEG_INFINITY, f64::max);
                let edge = outer + gap;
                for sign in [-1.0, 1.0] {
                    let (a, b) = (sign * (edge - c), sign * full);
                    blocks.push(coat(a.min(b), a.max(b), y_trace, y_trace + t + c));
                }
            }
        }
    }
    blocks.extend(rough_blocks);
    // Trace faces: blocks just under and over each trace, in the permittivity
    // of the slab they sit in (over the trace, the mask coat where there is
    // one).
    let eps_below = if g.trace_slot > 0 {
        g.slabs[g.trace_slot - 1].eps
    } else {
        1.0
    };
    let (eps_above, room_above, owner_above) = match (g.slabs.get(g.trace_slot + 1), g.mask) {
        (Some(sl), _) => (sl.eps, sl.thickness, sl.material),
        (None, Some(m)) if m.over_copper > 0.0 => (m.eps, m.over_copper, Some(m.layer)),
        (None, _) => (1.0, 0.0, None),
    };
    let owner_below = g
        .trace_slot
        .checked_sub(1)
        .and_then(|k| g.slabs[k].material);
    let (tb, tt) = (tr(1), tr(2));
    for c in &conductors {
        if tb > 0.0 && g.trace_slot > 0 {
            let h = tb.min(0.45 * g.slabs[g.trace_slot - 1].thickness);
            blocks.push((
                DielectricBlock {
                    x0: c.x_center - 0.5 * c.width_bottom,
                    x1: c.x_center + 0.5 * c.width_bottom,
                    y0: y_trace - h,
                    y1: y_trace,
                    eps_r: eps_below * factor,
                },
                owner_below,
            ));
        }
        if tt > 0.0 && room_above > 0.0 {
            let h = tt.min(0.45 * room_above);
            blocks.push((
                DielectricBlock {
                    x0: c.x_center - 0.5 * c.width_top,
                    x1: c.x_center + 0.5 * c.width_top,
                    y0: y_trace + t,
                    y1: y_trace + t + h,
                    eps_r: eps_above * factor,
                },
                owner_above,
            ));
        }
    }
    let coplanar_grounds = g.gap.map(|gap| CoplanarGrounds {
        gap,
        width: None,
        y_bottom: y_trace,
        thickness: t,
    });
    let (blocks, owners): (Vec<DielectricBlock>, Vec<Option<usize>>) = blocks.into_iter().unzip();
    (
        CrossSection {
            layers,
            bottom_plane: true,
            top_plane: g.top_plane.is_some(),
            conductors,
            blocks,
            coplanar_grounds,
        },
        owners,
    )
}
