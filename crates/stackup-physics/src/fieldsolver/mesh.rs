//! Non-uniform tensor-product mesh: lines on every key coordinate
//! (interfaces, conductor faces and edges), geometric grading towards the
//! conductor edges where the field is singular.

/// One axis of the mesh description.
#[derive(Debug, Clone)]
pub(crate) struct AxisSpec {
    /// Domain start and end.
    pub lo: f64,
    pub hi: f64,
    /// Coordinates that must be mesh lines (inside [lo, hi]).
    pub keys: Vec<f64>,
    /// Coordinates the mesh grades towards (subset of keys).
    pub singular: Vec<f64>,
    /// Cell size at a singular coordinate.
    pub h_fine: f64,
    /// Growth ratio of successive cells away from singular coordinates.
    pub growth: f64,
    /// Piecewise cap on the cell size: (from, to, h_max), applied where
    /// several overlap by the minimum. Outside all ranges `h_far` applies.
    pub caps: Vec<(f64, f64, f64)>,
    /// Cap far from everything.
    pub h_far: f64,
    /// Minimum number of cells between two consecutive key lines.
    pub min_cells: usize,
    /// Most lines the axis may have; more is an error (mesh budget).
    pub max_lines: usize,
}

impl AxisSpec {
    fn size_at(&self, x: f64) -> f64 {
        let mut s = self.h_far;
        for &(a, b, h) in &self.caps {
            if x >= a && x <= b {
                s = s.min(h);
            }
        }
        let d = self
            .singular
            .iter()
            .map(|&c| (x - c).abs())
            .fold(f64::INFINITY, f64::min);
        if d.is_finite() {
            s = s.min(self.h_fine + (self.growth - 1.0) * d);
        }
        s
    }
}

/// Merges coordinates closer than `tol`, keeping sorted order.
pub(crate) fn dedup_sorted(mut v: Vec<f64>, tol: f64) -> Vec<f64> {
    v.sort_by(f64::total_cmp);
    let mut out: Vec<f64> = Vec::with_capacity(v.len());
    for x in v {
        match out.last() {
            Some(&l) if (x - l).abs() <= tol => {}
            _ => out.push(x),
        }
    }
    out
}

/// Merges two ascending lists into one ascending list (ties: `x` first).
fn merge_sorted(x: &[f64], y: &[f64]) -> Vec<f64> {
    let mut out = Vec::with_capacity(x.len() + y.len());
    let (mut i, mut j) = (0, 0);
    while i < x.len() && j < y.len() {
        if y[j].total_cmp(&x[i]).is_lt() {
            out.push(y[j]);
            j += 1;
        } else {
            out.push(x[i]);
            i += 1;
        }
    }
    out.extend_from_slice(&x[i..]);
    out.extend_from_slice(&y[j..]);
    out
}

/// Builds the base (level-1) lines of one axis. Each interval between key
/// lines is filled by equidistributing 1/size, so cell sizes vary smoothly.
#[cfg(test)]
pub(crate) fn base_lines(spec: &AxisSpec, tol: f64) -> Vec<f64> {
    lines_with_counts(spec, tol, None)
        .map(|(l, _)| l)
        .unwrap_or_default()
}

/// Why lines could not be placed.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum LineError {
    /// The key intervals differ from the counts given (another topology).
    Topology(String),
    /// More lines than the axis's budget.
    TooMany(String),
}

/// Like `base_lines`, also returning the number of cells of every interval
/// between key lines; with `counts` given, those numbers are used instead
/// of the ones the size function asks for (same mesh topology for two
/// slightly different geometries). Errors if the number of intervals
/// differs from `counts`.
pub(crate) fn lines_with_counts(
    spec: &AxisSpec,
    tol: f64,
    counts: Option<&[usize]>,
) -> Result<(Vec<f64>, Vec<usize>), LineError> {
    let mut keys = spec.keys.clone();
    keys.push(spec.lo);
    keys.push(spec.hi);
    keys.retain(|&k| k >= spec.lo - tol && k <= spec.hi + tol);
    let keys = dedup_sorted(keys, tol);
    if let Some(c) = counts {
        if c.len() + 1 != keys.len() {
            return Err(LineError::Topology(format!(
                "mesh topology differs: {} key intervals instead of {}",
                keys.len().saturating_sub(1),
                c.len()
            )));
        }
    }
    let mut used = Vec::with_capacity(keys.len());
    let mut lines = vec![keys[0]];
    for (iv, w) in keys.windows(2).enumerate() {
        let (a, b) = (w[0], w[1]);
        let len = b - a;
        // Sample points clustered geometrically at both ends, where the size
        // function is smallest (all singular coordinates are key lines).
        // Three ascending runs (near a, uniform, near b) merged in order:
        // the same points a full sort would give, without sorting.
        let mut near_a = vec![a];
        let mut near_b = vec![b];
        let mut d = len * 1e-7;
        while d < 0.5 * len {
            near_a.push(a + d);
            near_b.push(b - d);
            d *= 1.1;
        }
        near_b.reverse();
        let uniform: Vec<f64> = (1..32).map(|k| a + len * k as f64 / 32.0).collect();
        let xs_s = merge_sorted(&merge_sorted(&near_a, &uniform), &near_b);
        // cumulative integral of 1/size (trapezoid rule)
        let mut cum = Vec::with_capacity(xs_s.len());
        cum.push(0.0);
        let mut prev = 1.0 / spec.size_at(a);
        for k in 1..xs_s.len() {
            let cur = 1.0 / spec.size_at(xs_s[k]);
            let last = cum[k - 1];
            cum.push(last + 0.5 * (prev + cur) * (xs_s[k] - xs_s[k - 1]));
            prev = cur;
        }
        let total = *cum.last().unwrap_or(&0.0);
        let n = match counts {
            Some(c) => c[iv],
            None => (total.ceil() as usize).max(spec.min_cells).max(1),
        };
        used.push(n);
        if n > spec.max_lines.saturating_sub(lines.len()) {
            return Err(LineError::TooMany(format!(
                "the section needs a mesh of more than {} lines across, beyond the solver's limit of {}: its features span too wide a range of sizes",
                spec.max_lines, spec.max_lines
            )));
        }
        for k in 1..n {
            let target = total * k as f64 / n as f64;
            // invert the cumulative integral by linear interpolation
            let idx = cum.partition_point(|&c| c < target).clamp(1, cum.len() - 1);
            let (c0, c1) = (cum[idx - 1], cum[idx]);
            let frac = if c1 > c0 {
                (target - c0) / (c1 - c0)
            } else {
                0.5
            };
            lines.push(xs_s[idx - 1] + (xs_s[idx] - xs_s[idx - 1]) * frac);
        }
        lines.push(b);
    }
    Ok((lines, used))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn keys_are_lines_and_grading_is_smooth() {
        let spec = AxisSpec {
            lo: -10.0,
            hi: 10.0,
            keys: vec![-0.5, 0.5, 0.0],
            singular: vec![-0.5, 0.5],
            h_fine: 0.01,
            growth: 1.3,
            caps: vec![(-1.0, 1.0, 0.1)],
            h_far: 1e9,
            min_cells: 2,
            max_lines: 100_000,
        };
        let l = base_lines(&spec, 1e-12);
        for k in [-10.0, -0.5, 0.0, 0.5, 10.0] {
            assert!(l.iter().any(|&x| (x - k).abs() < 1e-12), "{k} missing");
        }
        for w in l.windows(3) {
            let (d0, d1) = (w[1] - w[0], w[2] - w[1]);
            assert!(d0 > 0.0 && d1 > 0.0);
            assert!(d1 / d0 < 1.8 && d0 / d1 < 1.8, "{d0} {d1}");
        }
    }
}
