//! Delay of routed nets: the sum over segments of length times the delay
//! per unit length of the net class on the segment's layer (worst-case
//! roughness where declared, else smooth copper).

use crate::model::{Net, Segment, Stackup};

use super::Analysis;

/// The net class whose delay applies to `seg`: the segment's own, else the
/// first class defined on its layer.
pub fn segment_class(s: &Stackup, seg: &Segment) -> Option<usize> {
    seg.net_class.or_else(|| {
        s.net_classes
            .iter()
            .position(|c| c.layer_index == seg.layer_index)
    })
}

/// Delay per unit length of class `ci`, s/m: worst-case rough copper, else
/// smooth copper; `None` when the class's section was not solved.
pub fn class_delay(a: &Analysis, ci: usize) -> Option<f64> {
    let ca = a.classes.get(ci)?;
    ca.rough_worst
        .or(ca.smooth.as_ref().ok().copied())
        .map(|n| n.delay)
}

/// Delay of `net`, s, or the JSON pointers of the segments whose delay is
/// unknown (no solved class on their layer).
pub fn net_delay(s: &Stackup, a: &Analysis, net: &Net) -> Result<f64, Vec<String>> {
    let mut t = 0.0;
    let mut missing = Vec::new();
    for seg in &net.segments {
        match segment_class(s, seg).and_then(|ci| class_delay(a, ci)) {
            Some(d) => t += d * seg.length,
            None => missing.push(seg.pointer.clone()),
        }
    }
    if missing.is_empty() {
        Ok(t)
    } else {
        Err(missing)
    }
}
