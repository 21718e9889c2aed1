//! The cross-section the solver takes: dielectric layers and blocks,
//! traces (etch trapezoids), planes and coplanar grounds, and the checks a
//! section must pass before it is meshed (finite, positive, conductors
//! inside their layers, mirror symmetry).

use super::*;

/// A dielectric layer of the stack, listed bottom to top.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DielectricLayer {
    /// Thickness, m.
    pub thickness: f64,
    /// Relative permittivity (Dk).
    pub eps_r: f64,
}

/// A trace of trapezoidal cross-section (etch profile). `thickness` may be 0
/// (infinitely thin strip; `width_top` is then ignored).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Trace {
    /// Horizontal position of the trace centre, m.
    pub x_center: f64,
    /// Height of the trace's bottom face above the bottom plane, m.
    pub y_bottom: f64,
    /// Width of the bottom face, m.
    pub width_bottom: f64,
    /// Width of the top face, m.
    pub width_top: f64,
    /// Copper thickness, m.
    pub thickness: f64,
}

impl Trace {
    /// A rectangular trace.
    pub fn rect(x_center: f64, y_bottom: f64, width: f64, thickness: f64) -> Self {
        Trace {
            x_center,
            y_bottom,
            width_bottom: width,
            width_top: width,
            thickness,
        }
    }
    pub(super) fn y_top(&self) -> f64 {
        self.y_bottom + self.thickness
    }
    pub(super) fn half_width_at(&self, y: f64) -> f64 {
        if self.thickness <= 0.0 {
            return 0.5 * self.width_bottom;
        }
        let f = ((y - self.y_bottom) / self.thickness).clamp(0.0, 1.0);
        0.5 * (self.width_bottom + (self.width_top - self.width_bottom) * f)
    }
    pub(super) fn x_min(&self) -> f64 {
        self.x_center - 0.5 * self.max_width()
    }
    pub(super) fn x_max(&self) -> f64 {
        self.x_center + 0.5 * self.max_width()
    }
    pub(super) fn max_width(&self) -> f64 {
        if self.thickness > 0.0 {
            self.width_bottom.max(self.width_top)
        } else {
            self.width_bottom
        }
    }
    pub(super) fn min_width(&self) -> f64 {
        if self.thickness > 0.0 {
            self.width_bottom.min(self.width_top)
        } else {
            self.width_bottom
        }
    }
}

/// A dielectric rectangle painted over the layers (later blocks override
/// earlier ones): resin pockets, solder mask, thin roughness layers on a
/// trace face.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DielectricBlock {
    /// Left edge, m.
    pub x0: f64,
    /// Right edge, m.
    pub x1: f64,
    /// Bottom edge (from the bottom plane), m.
    pub y0: f64,
    /// Top edge, m.
    pub y1: f64,
    /// Relative permittivity.
    pub eps_r: f64,
}

/// Grounded coplanar strips on both sides of the signal conductors, at
/// `gap` from the outermost bottom edges of the traces.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CoplanarGrounds {
    /// Edge-to-edge gap from the outermost trace (bottom face) to each ground, m.
    pub gap: f64,
    /// Width of each ground strip, m; `None` runs them to the side walls.
    pub width: Option<f64>,
    /// Bottom face of the grounds, m (usually the traces' y_bottom).
    pub y_bottom: f64,
    /// Ground copper thickness, m (0 allowed).
    pub thickness: f64,
}

/// Cross-section of one to three signal conductors in a layered dielectric.
/// y is measured upwards from the bottom plane (or from the bottom of the
/// first layer when there is no bottom plane).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct CrossSection {
    /// Dielectric layers, bottom to top.
    pub layers: Vec<DielectricLayer>,
    /// Ground plane under the first layer.
    pub bottom_plane: bool,
    /// Ground plane on the last layer; `false` means open air above.
    pub top_plane: bool,
    /// Signal conductors (1 to 3).
    pub conductors: Vec<Trace>,
    /// Dielectric rectangles painted over the layers, in order.
    pub blocks: Vec<DielectricBlock>,
    /// Optional coplanar grounds.
    pub coplanar_grounds: Option<CoplanarGrounds>,
}

/// A dielectric region of a cross-section, as the solver's filling
/// results are ordered ([`CrossSection::regions`]).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Region {
    /// `layers[k]`, where no block covers it.
    Layer(usize),
    /// `blocks[b]`.
    Block(usize),
    /// Outside every layer and block (the air over an open section).
    Air,
}

impl CrossSection {
    /// The dielectric regions in the order of `SolvedLine::filling`:
    /// every layer, every block, then the air.
    pub fn regions(&self) -> Vec<Region> {
        (0..self.layers.len())
            .map(Region::Layer)
            .chain((0..self.blocks.len()).map(Region::Block))
            .chain(std::iter::once(Region::Air))
            .collect()
    }

    /// The layer holding height `y` (from the bottom of the first layer),
    /// `None` above the stack.
    pub fn layer_at(&self, y: f64) -> Option<usize> {
        let mut acc = 0.0;
        for (k, l) in self.layers.iter().enumerate() {
            if y >= acc && y < acc + l.thickness {
                return Some(k);
            }
            acc += l.thickness;
        }
        None
    }

    /// Relative permittivity of each region, same order as [`Self::regions`].
    pub fn region_eps(&self) -> Vec<f64> {
        self.regions()
            .into_iter()
            .map(|r| match r {
                Region::Layer(k) => self.layers[k].eps_r,
                Region::Block(b) => self.blocks[b].eps_r,
                Region::Air => 1.0,
            })
            .collect()
    }
}

pub(super) fn finite_pos(name: &str, v: f64) -> Result<(), SolveError> {
    if v.is_finite() && v > 0.0 {
        Ok(())
    } else {
        Err(SolveError::new(format!(
            "{name} must be finite and > 0, got {v}"
        )))
    }
}

pub(super) fn finite_nonneg(name: &str, v: f64) -> Result<(), SolveError> {
    if v.is_finite() && v >= 0.0 {
        Ok(())
    } else {
        Err(SolveError::new(format!(
            "{name} must be finite and >= 0, got {v}"
        )))
    }
}

pub(super) fn finite(name: &str, v: f64) -> Result<(), SolveError> {
    if v.is_finite() {
        Ok(())
    } else {
        Err(SolveError::new(format!("{name} must be finite, got {v}")))
    }
}

pub(super) fn eps_ok(name: &str, v: f64) -> Result<(), SolveError> {
    if v.is_finite() && v >= 1.0 {
        Ok(())
    } else {
        Err(SolveError::new(format!(
            "{name} must be finite and >= 1, got {v}"
        )))
    }
}

pub(super) fn validate(cs: &CrossSection) -> Result<f64, SolveError> {
    if cs.layers.is_empty() {
        return Err(SolveError::new("cross-section has no dielectric layers"));
    }
    for (i, l) in cs.layers.iter().enumerate() {
        finite_pos(&format!("layer {i} thickness"), l.thickness)?;
        eps_ok(&format!("layer {i} eps_r"), l.eps_r)?;
    }
    if !cs.bottom_plane && !cs.top_plane {
        return Err(SolveError::new(
            "cross-section needs at least one reference plane (bottom or top)",
        ));
    }
    if cs.conductors.is_empty() || cs.conductors.len() > 3 {
        return Err(SolveError::new(format!(
            "the solver takes 1 to 3 signal conductors, got {}",
            cs.conductors.len()
        )));
    }
    let stack_h: f64 = cs.layers.iter().map(|l| l.thickness).sum();
    for (i, t) in cs.conductors.iter().enumerate() {
        finite(&format!("trace {i} x_center"), t.x_center)?;
        finite(&format!("trace {i} y_bottom"), t.y_bottom)?;
        finite_pos(&format!("trace {i} width_bottom"), t.width_bottom)?;
        finite_nonneg(&format!("trace {i} thickness"), t.thickness)?;
        if t.thickness > 0.0 {
            finite_pos(&format!("trace {i} width_top"), t.width_top)?;
        }
        check_vertical(&format!("trace {i}"), t, cs, stack_h)?;
    }
    for (i, b) in cs.blocks.iter().enumerate() {
        for (n, v) in [("x0", b.x0), ("x1", b.x1), ("y0", b.y0), ("y1", b.y1)] {
            finite(&format!("block {i} {n}"), v)?;
        }
        eps_ok(&format!("block {i} eps_r"), b.eps_r)?;
        if !(b.x1 > b.x0 && b.y1 > b.y0) {
            return Err(SolveError::new(format!(
                "block {i} must have x1 > x0 and y1 > y0"
            )));
        }
    }
    if let Some(g) = &cs.coplanar_grounds {
        finite_pos("coplanar ground gap", g.gap)?;
        if let Some(w) = g.width {
            finite_pos("coplanar ground width", w)?;
        }
        finite_nonneg("coplanar ground thickness", g.thickness)?;
        finite("coplanar ground y_bottom", g.y_bottom)?;
        let probe = Trace::rect(0.0, g.y_bottom, 1.0, g.thickness);
        check_vertical("coplanar grounds", &probe, cs, stack_h)?;
    }
    // Overlap between signal conductors.
    let n = cs.conductors.len();
    for i in 0..n {
        for j in i + 1..n {
            let (a, b) = (&cs.conductors[i], &cs.conductors[j]);
            let y_overlap = a.y_bottom <= b.y_top() && b.y_bottom <= a.y_top();
            let x_overlap = a.x_min() <= b.x_max() && b.x_min() <= a.x_max();
            if x_overlap && y_overlap {
                return Err(SolveError::new(format!(
                    "traces {i} and {j} touch or overlap"
                )));
            }
        }
    }
    Ok(stack_h)
}

pub(super) fn check_vertical(
    what: &str,
    t: &Trace,
    cs: &CrossSection,
    stack_h: f64,
) -> Result<(), SolveError> {
    if cs.bottom_plane && t.y_bottom <= 0.0 {
        return Err(SolveError::new(format!(
            "{what} must lie above the bottom plane (y_bottom = {} m)",
            t.y_bottom
        )));
    }
    if cs.top_plane && t.y_top() >= stack_h {
        return Err(SolveError::new(format!(
            "{what} must lie below the top plane at {stack_h} m (top face at {} m)",
            t.y_top()
        )));
    }
    if !cs.bottom_plane && t.y_bottom < 0.0 {
        return Err(SolveError::new(format!(
            "{what} lies below the first layer (y_bottom = {} m)",
            t.y_bottom
        )));
    }
    if !cs.top_plane && t.y_bottom > stack_h * 1.0001 + 1e-12 {
        return Err(SolveError::new(format!(
            "{what} floats above the stack (y_bottom = {} m > {stack_h} m)",
            t.y_bottom
        )));
    }
    Ok(())
}

/// Whether `cs` is its own mirror image in x = 0 with every trace either
/// centred on it (one trace) or clear of it (a pair): conductors, blocks
/// (and so the coplanar grounds, placed from the traces' edges).
pub(super) fn mirror_symmetric(cs: &CrossSection, tol: f64) -> bool {
    let close = |a: f64, b: f64| (a - b).abs() <= tol;
    let conductors = match cs.conductors.as_slice() {
        [a] => close(a.x_center, 0.0),
        [a, b] => {
            close(a.x_center, -b.x_center)
                && a.y_bottom == b.y_bottom
                && a.width_bottom == b.width_bottom
                && a.width_top == b.width_top
                && a.thickness == b.thickness
                && b.x_min() > tol
        }
        _ => false,
    };
    conductors
        && cs.blocks.iter().all(|b| {
            cs.blocks.iter().any(|c| {
                close(b.x0, -c.x1)
                    && close(b.x1, -c.x0)
                    && b.y0 == c.y0
                    && b.y1 == c.y1
                    && b.eps_r == c.eps_r
            })
        })
}

pub(super) fn inside(t: &Trace, x: f64, y: f64, tol: f64) -> bool {
    if y < t.y_bottom - tol || y > t.y_top() + tol {
        return false;
    }
    (x - t.x_center).abs() <= t.half_width_at(y) + tol
}
