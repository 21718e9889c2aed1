//! Small dense matrix helpers for capacitance matrices (n ≤ 3): inverse,
//! eigenvalues, product.

pub(super) fn inverse(a: &[f64], n: usize) -> Option<Vec<f64>> {
    match n {
        1 => (a[0] != 0.0).then(|| vec![1.0 / a[0]]),
        _ => {
            // Gauss-Jordan with partial pivoting (n ≤ 3)
            let mut m = a.to_vec();
            let mut inv = vec![0.0; n * n];
            for i in 0..n {
                inv[i * n + i] = 1.0;
            }
            for col in 0..n {
                let piv = (col..n)
                    .max_by(|&r1, &r2| m[r1 * n + col].abs().total_cmp(&m[r2 * n + col].abs()))?;
                if m[piv * n + col] == 0.0 {
                    return None;
                }
                for c in 0..n {
                    m.swap(col * n + c, piv * n + c);
                    inv.swap(col * n + c, piv * n + c);
                }
                let d = m[col * n + col];
                for c in 0..n {
                    m[col * n + c] /= d;
                    inv[col * n + c] /= d;
                }
                for r in 0..n {
                    if r != col {
                        let f = m[r * n + col];
                        for c in 0..n {
                            m[r * n + c] -= f * m[col * n + c];
                            inv[r * n + c] -= f * inv[col * n + c];
                        }
                    }
                }
            }
            Some(inv)
        }
    }
}

/// Eigenvalues of a real n×n matrix (n ≤ 3) known to have real positive
/// eigenvalues (C0⁻¹C is similar to a symmetric positive-definite matrix).
pub(super) fn eigenvalues(a: &[f64], n: usize) -> Vec<f64> {
    match n {
        1 => vec![a[0]],
        2 => {
            let tr = a[0] + a[3];
            let det = a[0] * a[3] - a[1] * a[2];
            let disc = (0.25 * tr * tr - det).max(0.0).sqrt();
            vec![0.5 * tr - disc, 0.5 * tr + disc]
        }
        _ => {
            // characteristic polynomial λ³ − c2 λ² + c1 λ − c0, trigonometric roots
            let tr = a[0] + a[4] + a[8];
            let c1 =
                a[0] * a[4] - a[1] * a[3] + a[0] * a[8] - a[2] * a[6] + a[4] * a[8] - a[5] * a[7];
            let det = a[0] * (a[4] * a[8] - a[5] * a[7]) - a[1] * (a[3] * a[8] - a[5] * a[6])
                + a[2] * (a[3] * a[7] - a[4] * a[6]);
            let q = tr / 3.0;
            let pp = (tr * tr - 3.0 * c1) / 9.0;
            let r = (2.0 * tr.powi(3) - 9.0 * tr * c1 + 27.0 * det) / 54.0;
            let pp = pp.max(0.0);
            let s = pp.sqrt();
            let mut ev = if s == 0.0 {
                vec![q; 3]
            } else {
                let cosv = (r / (s * s * s)).clamp(-1.0, 1.0);
                let th = cosv.acos();
                (0..3)
                    .map(|k| {
                        q + 2.0 * s * ((th + 2.0 * std::f64::consts::PI * k as f64) / 3.0).cos()
                    })
                    .collect()
            };
            // roots of λ³ − tr λ² + c1 λ − det with the substitution above
            ev.sort_by(f64::total_cmp);
            ev
        }
    }
}

pub(super) fn matmul(a: &[f64], b: &[f64], n: usize) -> Vec<f64> {
    let mut c = vec![0.0; n * n];
    for i in 0..n {
        for j in 0..n {
            for k in 0..n {
                c[i * n + j] += a[i * n + k] * b[k * n + j];
            }
        }
    }
    c
}
