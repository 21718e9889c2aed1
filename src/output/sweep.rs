//! `impedance --sweep`: each class's numbers across frequency as a table,
//! JSON, CSV, and Touchstone files of a length of each line.

use serde::Serialize;

use stackup_physics::twoport::line_s_params;

use crate::analysis::sweep::{rlgc, SweepPoint};
use crate::model::Stackup;

/// One file's sweeps: its name as shown, the stackup, and per net class
/// (same order) its points, or `None` when it was not solved.
pub type FileSweep<'a> = (&'a str, &'a Stackup, Vec<Option<Vec<SweepPoint>>>);

#[derive(Serialize)]
struct PointJson {
    frequency_ghz: f64,
    z_smooth_ohm: f64,
    z_rough_ohm: Option<f64>,
    /// The signal's impedance at f (power-current impedance of a surface
    /// microstrip; the static one elsewhere).
    z_at_frequency_ohm: f64,
    eps_eff_smooth: f64,
    eps_eff_rough: Option<f64>,
    delay_ps_per_mm: f64,
    conductor_loss_smooth_db_per_mm: f64,
    conductor_loss_rough_db_per_mm: f64,
    dielectric_loss_db_per_mm: f64,
    loss_db_per_mm: f64,
}

fn round(v: f64, digits: i32) -> f64 {
    let k = 10f64.powi(digits);
    (v * k).round() / k
}

fn point(p: &SweepPoint) -> PointJson {
    let delay = p.rough.as_ref().unwrap_or(&p.smooth).delay;
    PointJson {
        frequency_ghz: round(p.frequency / 1e9, 6),
        z_smooth_ohm: round(p.smooth.z, 3),
        z_rough_ohm: p.rough.as_ref().map(|r| round(r.z, 3)),
        z_at_frequency_ohm: round(p.at_frequency().z, 3),
        eps_eff_smooth: round(p.smooth.eps_eff, 5),
        eps_eff_rough: p.rough.as_ref().map(|r| round(r.eps_eff, 5)),
        delay_ps_per_mm: round(delay * 1e9, 5),
        conductor_loss_smooth_db_per_mm: round(p.loss.conductor_smooth / 1e3, 6),
        conductor_loss_rough_db_per_mm: round(p.loss.conductor_rough / 1e3, 6),
        dielectric_loss_db_per_mm: round(p.loss.dielectric / 1e3, 6),
        loss_db_per_mm: round(p.loss.total_rough() / 1e3, 6),
    }
}

#[derive(Serialize)]
struct ClassJson<'a> {
    net_class: &'a str,
    sweep: Option<Vec<PointJson>>,
}

#[derive(Serialize)]
struct FileJson<'a> {
    file: &'a str,
    net_classes: Vec<ClassJson<'a>>,
}

/// The sweeps as JSON: per file, per net class, one object per frequency.
pub fn json(files: &[FileSweep<'_>]) -> String {
    let v: Vec<FileJson> = files
        .iter()
        .map(|(name, s, sweeps)| FileJson {
            file: name,
            net_classes: s
                .net_classes
                .iter()
                .zip(sweeps)
                .map(|(nc, sw)| ClassJson {
                    net_class: &nc.name,
                    sweep: sw.as_ref().map(|pts| pts.iter().map(point).collect()),
                })
                .collect(),
        })
        .collect();
    serde_json::to_string_pretty(&v).unwrap_or_else(|_| "[]".into()) + "\n"
}

/// The sweeps as CSV, one row per file, class and frequency.
pub fn csv(files: &[FileSweep<'_>]) -> String {
    let mut out = String::from(
        "file,net_class,frequency_ghz,z_smooth_ohm,z_rough_ohm,z_at_frequency_ohm,eps_eff_smooth,eps_eff_rough,delay_ps_per_mm,conductor_loss_smooth_db_per_mm,conductor_loss_rough_db_per_mm,dielectric_loss_db_per_mm,loss_db_per_mm\n",
    );
    let field = |t: &str| {
        if t.contains([',', '"', '\n']) {
            format!("\"{}\"", t.replace('"', "\"\""))
        } else {
            t.to_string()
        }
    };
    for (name, s, sweeps) in files {
        for (nc, sw) in s.net_classes.iter().zip(sweeps) {
            for p in sw.iter().flatten() {
                let j = point(p);
                let opt = |v: Option<f64>| v.map_or(String::new(), |v| v.to_string());
                out.push_str(&format!(
                    "{},{},{},{},{},{},{},{},{},{},{},{},{}\n",
                    field(name),
                    field(&nc.name),
                    j.frequency_ghz,
                    j.z_smooth_ohm,
                    opt(j.z_rough_ohm),
                    j.z_at_frequency_ohm,
                    j.eps_eff_smooth,
                    opt(j.eps_eff_rough),
                    j.delay_ps_per_mm,
                    j.conductor_loss_smooth_db_per_mm,
                    j.conductor_loss_rough_db_per_mm,
                    j.dielectric_loss_db_per_mm,
                    j.loss_db_per_mm
                ));
            }
        }
    }
    out
}

/// The sweeps as text tables, one per class.
pub fn table(files: &[FileSweep<'_>]) -> String {
    let mut out = String::new();
    for (name, s, sweeps) in files {
        out.push_str(&format!("{name}\n"));
        for (nc, sw) in s.net_classes.iter().zip(sweeps) {
            let Some(pts) = sw else {
                out.push_str(&format!("  {}: not solved\n", nc.name));
                continue;
            };
            out.push_str(&format!(
                "  {}\n    {:>9}  {:>8}  {:>8}  {:>8}  {:>7}  {:>6}  {:>9}  {:>9}  {:>9}  {:>8}\n",
                nc.name,
                "f GHz",
                "Z smooth",
                "Z rough",
                "Z at f",
                "eps_eff",
                "ps/mm",
                "ac dB/mm",
                "ac rough",
                "ad dB/mm",
                "dB/mm"
            ));
            for p in pts {
                let j = point(p);
                out.push_str(&format!(
                    "    {:>9.3}  {:>8.2}  {:>8}  {:>8.2}  {:>7.4}  {:>6.3}  {:>9.5}  {:>9.5}  {:>9.5}  {:>8.5}\n",
                    j.frequency_ghz,
                    j.z_smooth_ohm,
                    j.z_rough_ohm.map_or("—".into(), |z| format!("{z:.2}")),
                    j.z_at_frequency_ohm,
                    j.eps_eff_rough.unwrap_or(j.eps_eff_smooth),
                    j.delay_ps_per_mm,
                    j.conductor_loss_smooth_db_per_mm,
                    j.conductor_loss_rough_db_per_mm,
                    j.dielectric_loss_db_per_mm,
                    j.loss_db_per_mm
                ));
            }
        }
    }
    out.push_str(
        "  Z: Z0, or Z_diff for pairs, static (what a TDR coupon measures); Z at f: with a surface microstrip's impedance dispersion (Jansen-Kirschning 1983), used in Touchstone files; eps_eff and delay with the declared (worst-case) roughness, the delay also with the copper's internal inductance; ac: conductor loss (Wheeler's rule), ad: dielectric loss; one solve per class, carried across frequency by each material's causal model\n",
    );
    out
}

/// A Touchstone 1.1 four-port of `length` metres of a pair (ports 1 and 2
/// the near and far ends of one line, 3 and 4 of the other; 50 Ω each) at
/// every sweep frequency, from its even and odd modes: for a symmetric
/// pair each mode is a two-port of its own (Se, So), and the four-port is
/// [[A, B], [B, A]] with A = (Se + So)/2, B = (Se − So)/2 (modal
/// decomposition of symmetric coupled lines; e.g. Pozar, *Microwave
/// Engineering*, 4th ed., sec. 7.6, from memory; searched: the book's
/// numbering, only catalogue entries found).
pub fn touchstone_pair(
    file: &str,
    class: &str,
    length: f64,
    pts: &[SweepPoint],
) -> Result<String, String> {
    let mut out = format!(
        "! stackup-lint {}: net class {class} of {file}, {:.3} mm, a pair: ports 1-2 one line (near, far), 3-4 the other\n! an engineering aid, not a measurement: confirm with the fabricator's modelling and test coupons\n# GHz S RI R 50\n",
        env!("CARGO_PKG_VERSION"),
        length * 1e3
    );
    for p in pts {
        let n = p.rough.as_ref().unwrap_or(&p.smooth);
        let (Some(pair), Some(even_loss)) = (n.pair, p.even_loss.as_ref()) else {
            return Err("not a solved pair".into());
        };
        let se = line_s_params(
            &rlgc(p.frequency, pair.z_even, pair.eps_eff_even, even_loss),
            p.frequency,
            length,
            50.0,
        )
        .map_err(|e| e.to_string())?;
        let so = line_s_params(
            &rlgc(p.frequency, pair.z_odd, pair.eps_eff_odd, &p.loss),
            p.frequency,
            length,
            50.0,
        )
        .map_err(|e| e.to_string())?;
        let a = |i: usize, j: usize| (se[i][j] + so[i][j]) * 0.5;
        let b = |i: usize, j: usize| (se[i][j] - so[i][j]) * 0.5;
        let m = [
            [a(0, 0), a(0, 1), b(0, 0), b(0, 1)],
            [a(1, 0), a(1, 1), b(1, 0), b(1, 1)],
            [b(0, 0), b(0, 1), a(0, 0), a(0, 1)],
            [b(1, 0), b(1, 1), a(1, 0), a(1, 1)],
        ];
        for (r, row) in m.iter().enumerate() {
            if r == 0 {
                out.push_str(&format!("{:.9}", p.frequency / 1e9));
            }
            for v in row {
                out.push_str(&format!(" {:.9e} {:.9e}", v.re, v.im));
            }
            out.push('\n');
        }
    }
    Ok(out)
}

/// A Touchstone 1.1 two-port of `length` metres of a single line, 50 Ω
/// ports, at every sweep frequency: S in real/imaginary form (pairs:
/// [`touchstone_pair`]).
pub fn touchstone(
    file: &str,
    class: &str,
    length: f64,
    pts: &[SweepPoint],
) -> Result<String, String> {
    let z_ref = 50.0;
    let mut out = format!(
        "! stackup-lint {}: net class {class} of {file}, {:.3} mm\n! an engineering aid, not a measurement: confirm with the fabricator's modelling and test coupons\n# GHz S RI R {z_ref}\n",
        env!("CARGO_PKG_VERSION"),
        length * 1e3,
    );
    for p in pts {
        let n = p.at_frequency();
        let s = line_s_params(
            &rlgc(p.frequency, n.z, n.eps_eff, &p.loss),
            p.frequency,
            length,
            z_ref,
        )
        .map_err(|e| e.to_string())?;
        out.push_str(&format!(
            "{:.9} {:.9e} {:.9e} {:.9e} {:.9e} {:.9e} {:.9e} {:.9e} {:.9e}\n",
            p.frequency / 1e9,
            s[0][0].re,
            s[0][0].im,
            s[1][0].re,
            s[1][0].im,
            s[0][1].re,
            s[0][1].im,
            s[1][1].re,
            s[1][1].im
        ));
    }
    Ok(out)
}
