//! Richardson extrapolation of the levels' capacitances, with the spread
//! as an error estimate.

/// Richardson extrapolation of values computed with refinement factors
/// `ms`; returns (extrapolated, error estimate, order used).
pub(super) fn richardson(ms: &[f64], v: &[f64], assumed_p: f64) -> (f64, f64) {
    match v.len() {
        1 => (v[0], f64::NAN),
        2 => {
            let r = ms[1] / ms[0];
            let corr = (v[1] - v[0]) / (r.powf(assumed_p) - 1.0);
            // error: the spread between orders 1 and 2 around the assumption
            // error: half the spread of the extrapolation for orders
            // assumed_p ± 0.5 (observed orders on graded meshes lie within)
            let c1 = (v[1] - v[0]) / (r.powf(assumed_p - 0.5) - 1.0);
            let c2 = (v[1] - v[0]) / (r.powf(assumed_p + 0.5) - 1.0);
            (v[1] + corr, (c1 - c2).abs() * 0.5)
        }
        _ => {
            let (m0, m1, m2) = (ms[0], ms[1], ms[2]);
            let d01 = v[0] - v[1];
            let d12 = v[1] - v[2];
            // fit p: d01/d12 = (m0^-p − m1^-p)/(m1^-p − m2^-p)
            let ratio = |p: f64| (m0.powf(-p) - m1.powf(-p)) / (m1.powf(-p) - m2.powf(-p));
            let p = if d12 != 0.0 && d01 / d12 > 0.0 {
                let target = d01 / d12;
                let (mut lo, mut hi) = (0.5f64, 4.0f64);
                if target <= ratio(lo) {
                    lo
                } else if target >= ratio(hi) {
                    hi
                } else {
                    for _ in 0..60 {
                        let mid = 0.5 * (lo + hi);
                        if ratio(mid) < target {
                            lo = mid;
                        } else {
                            hi = mid;
                        }
                    }
                    0.5 * (lo + hi)
                }
            } else {
                assumed_p
            };
            let r = m2 / m1;
            let ext = v[2] + (v[2] - v[1]) / (r.powf(p) - 1.0);
            let r0 = m1 / m0;
            let ext01 = v[1] + (v[1] - v[0]) / (r0.powf(p) - 1.0);
            let err = (ext - ext01).abs() + 0.05 * (ext - v[2]).abs();
            (ext, err)
        }
    }
}

/// Extrapolates each entry of a list of per-level matrices.
pub(super) fn extrapolate(
    ms: &[f64],
    mats: &[Vec<f64>],
    assumed_p: f64,
    n: usize,
) -> (Vec<f64>, f64) {
    let mut out = vec![0.0; n * n];
    let mut rel_err: f64 = 0.0;
    for k in 0..n * n {
        let v: Vec<f64> = mats.iter().map(|m| m[k]).collect();
        let (e, err) = richardson(ms, &v, assumed_p);
        out[k] = e;
        if k % (n + 1) == 0 {
            rel_err = rel_err.max(err / e.abs());
        }
    }
    (out, rel_err)
}
