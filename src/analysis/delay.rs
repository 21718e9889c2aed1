//! Delay of routed nets: the sum over segments of length times the delay
//! per unit length of the net class on the segment's layer (worst-case
//! roughness where declared, else smooth copper), for every matched group,
//! computed once for the rules and the report.

use crate::model::{MatchedGroup, Net, Segment, Stackup};

use super::ClassAnalysis;

/// The delays of one matched group's nets, in the group's order.
#[derive(Debug, Clone, PartialEq)]
pub struct GroupDelays {
    pub nets: Vec<NetDelay>,
}

/// One net's delay.
#[derive(Debug, Clone, PartialEq)]
pub struct NetDelay {
    /// Delay, s, or the JSON pointers of the segments whose delay is
    /// unknown (no solved class on their layer).
    pub delay: Result<f64, Vec<String>>,
    /// The net's longest segment: its index in the net and the delay per
    /// unit length there (s/m), when known (to say how much length a skew
    /// is, and where to add it).
    pub longest: Option<(usize, f64)>,
}

/// The net class whose delay applies to `seg`: the segment's own, else the
/// first class defined on its layer.
fn segment_class(s: &Stackup, seg: &Segment) -> Option<usize> {
    seg.net_class.or_else(|| {
        s.net_classes
            .iter()
            .position(|c| c.layer_index == seg.layer_index)
    })
}

/// Delay per unit length of class `ci`, s/m: worst-case rough copper, else
/// smooth copper; `None` when the class's section was not solved.
fn class_delay(classes: &[ClassAnalysis], ci: usize) -> Option<f64> {
    let ca = classes.get(ci)?;
    ca.rough_worst
        .or(ca.smooth.as_ref().ok().copied())
        .map(|n| n.delay)
}

fn net_delay(s: &Stackup, classes: &[ClassAnalysis], net: &Net) -> NetDelay {
    let mut t = 0.0;
    let mut missing = Vec::new();
    let per_m = |seg: &Segment| segment_class(s, seg).and_then(|ci| class_delay(classes, ci));
    for seg in &net.segments {
        match per_m(seg) {
            Some(d) => t += d * seg.length,
            None => missing.push(seg.pointer.clone()),
        }
    }
    let longest = net
        .segments
        .iter()
        .enumerate()
        .max_by(|x, y| x.1.length.total_cmp(&y.1.length))
        .and_then(|(i, seg)| Some((i, per_m(seg)?)));
    NetDelay {
        delay: if missing.is_empty() {
            Ok(t)
        } else {
            Err(missing)
        },
        longest,
    }
}

/// The delays of every net of `g`.
pub fn group_delays(s: &Stackup, classes: &[ClassAnalysis], g: &MatchedGroup) -> GroupDelays {
    GroupDelays {
        nets: g.nets.iter().map(|n| net_delay(s, classes, n)).collect(),
    }
}
