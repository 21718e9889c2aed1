//! Dk and Df against frequency for one material, drawn with `plotters`'
//! SVG backend: the causal Djordjevic-Sarkar model the analysis uses, the
//! material's data points, its validated range shaded, and the analysis
//! frequencies of the net classes whose field runs in it.

use plotters::prelude::*;

use crate::analysis::coupons::CouponPoint;
use crate::analysis::materials::MaterialModel;
use crate::model::Material;

/// Plot size, px.
pub const SIZE: (u32, u32) = (760, 460);

const MODEL: RGBColor = RGBColor(0x1f, 0x4e, 0x8c);
const DATA: RGBColor = RGBColor(0xb3, 0x3a, 0x1b);
const VALID: RGBColor = RGBColor(0xdc, 0xea, 0xd5);
const MARK: RGBColor = RGBColor(0xc0, 0x7a, 0x1e);

/// Frequency span shown: a decade around the data, the validated range and
/// the class frequencies.
fn span(m: &Material, model: &MaterialModel, marks: &[(String, f64)]) -> (f64, f64) {
    let mut lo = model.valid_from;
    let mut hi = model.valid_to;
    for p in &m.points {
        lo = lo.min(p.frequency);
        hi = hi.max(p.frequency);
    }
    for (_, f) in marks {
        lo = lo.min(*f);
        hi = hi.max(*f);
    }
    let lo = (lo / 2.0).max(1e6);
    let hi = (hi * 2.0).max(lo * 10.0);
    (lo, hi)
}

fn padded(lo: f64, hi: f64, min_pad: f64) -> (f64, f64) {
    let pad = ((hi - lo) * 0.15).max(min_pad);
    (lo - pad, hi + pad)
}

fn ghz_label(v: &f64) -> String {
    let g = v / 1e9;
    if g >= 1.0 {
        format!("{g:.0}")
    } else if g >= 0.1 {
        format!("{g:.1}")
    } else {
        format!("{g:.2}")
    }
}

/// The SVG plot, or why it could not be drawn.
pub fn material_plot(
    m: &Material,
    model: &MaterialModel,
    marks: &[(String, f64)],
) -> Result<String, String> {
    let (f0, f1) = span(m, model, marks);
    if !(f0.is_finite() && f1.is_finite() && f1 > f0) {
        return Err(format!("no drawable frequency range ({f0:e} to {f1:e} Hz)"));
    }
    let n = 240;
    let curve: Vec<(f64, f64, f64)> = (0..=n)
        .map(|i| {
            let f = f0 * (f1 / f0).powf(i as f64 / n as f64);
            let at = model.at(f);
            (f, at.dk, at.df)
        })
        .filter(|(_, dk, df)| dk.is_finite() && df.is_finite())
        .collect();
    if curve.is_empty() {
        return Err("the material model gives no finite values in the plotted range".into());
    }
    let fold = |sel: fn(&(f64, f64, f64)) -> f64, pts: &[f64]| {
        let mut lo = f64::INFINITY;
        let mut hi = f64::NEG_INFINITY;
        for v in curve.iter().map(sel).chain(pts.iter().copied()) {
            lo = lo.min(v);
            hi = hi.max(v);
        }
        (lo, hi)
    };
    let data_dk: Vec<f64> = m.points.iter().map(|p| p.dk).collect();
    let data_df: Vec<f64> = m.points.iter().map(|p| p.df).collect();
    let (dk0, dk1) = fold(|c| c.1, &data_dk);
    let (df0, df1) = fold(|c| c.2, &data_df);
    let (dk0, dk1) = padded(dk0, dk1, 0.05);
    let (df0, df1) = padded(df0, df1, 0.0005);
    let df0 = df0.max(0.0);
    if ![dk0, dk1, df0, df1].iter().all(|v| v.is_finite()) || dk1 <= dk0 || df1 <= df0 {
        return Err("no drawable Dk or Df range".into());
    }

    let mut buf = String::new();
    {
        let root = SVGBackend::with_string(&mut buf, SIZE).into_drawing_area();
        let e = |err: DrawingAreaErrorKind<_>| format!("plot: {err}");
        root.fill(&WHITE).map_err(e)?;
        let (upper, lower) = root.split_vertically(SIZE.1 / 2);
        let panels: [(&DrawingArea<_, _>, &str, (f64, f64), usize); 2] =
            [(&upper, "Dk", (dk0, dk1), 1), (&lower, "Df", (df0, df1), 2)];
        for (area, name, (y0, y1), col) in panels {
            let mut chart = ChartBuilder::on(area)
                .margin(8)
                .x_label_area_size(30)
                .y_label_area_size(62)
                .build_cartesian_2d((f0..f1).log_scale(), y0..y1)
                .map_err(|err| format!("plot: {err}"))?;
            chart
                .configure_mesh()
                .x_desc("frequency, GHz")
                .y_desc(name)
                .x_label_formatter(&ghz_label)
                .y_label_formatter(&|v| {
                    if col == 1 {
                        format!("{v:.2}")
                    } else {
                        format!("{v:.4}")
                    }
                })
                .light_line_style(WHITE.mix(0.0))
                .bold_line_style(RGBColor(0xe2, 0xe4, 0xe6))
                .draw()
                .map_err(|err| format!("plot: {err}"))?;
            let (v0, v1) = (model.valid_from.max(f0), model.valid_to.min(f1));
            if v1 > v0 {
                chart
                    .draw_series(std::iter::once(Rectangle::new(
                        [(v0, y0), (v1, y1)],
                        VALID.filled(),
                    )))
                    .map_err(|err| format!("plot: {err}"))?;
            }
            for (_, f) in marks {
                chart
                    .draw_series(std::iter::once(PathElement::new(
                        vec![(*f, y0), (*f, y1)],
                        MARK.stroke_width(2),
                    )))
                    .map_err(|err| format!("plot: {err}"))?;
            }
            let pick = |c: &(f64, f64, f64)| (c.0, if col == 1 { c.1 } else { c.2 });
            chart
                .draw_series(LineSeries::new(
                    curve.iter().map(pick),
                    MODEL.stroke_width(2),
                ))
                .map_err(|err| format!("plot: {err}"))?;
            chart
                .draw_series(m.points.iter().map(|p| {
                    let y = if col == 1 { p.dk } else { p.df };
                    Circle::new((p.frequency, y), 4, DATA.filled())
                }))
                .map_err(|err| format!("plot: {err}"))?;
        }
        root.present().map_err(|err| format!("plot: {err}"))?;
    }
    Ok(buf)
}

/// Line colours of the loss plot, one per class in turn.
const SERIES: [RGBColor; 6] = [
    RGBColor(0x1f, 0x4e, 0x8c),
    RGBColor(0xb3, 0x3a, 0x1b),
    RGBColor(0x2e, 0x7d, 0x32),
    RGBColor(0x6a, 0x3d, 0x9a),
    RGBColor(0xc0, 0x7a, 0x1e),
    RGBColor(0x00, 0x83, 0x8f),
];

/// Insertion loss per 100 mm against frequency, one line per net class
/// (`series`: name and (Hz, dB) points), with a legend.
pub fn loss_plot(series: &[(String, Vec<(f64, f64)>)]) -> Result<String, String> {
    let pts = || series.iter().flat_map(|(_, v)| v.iter());
    let f1 = pts().map(|p| p.0).fold(0.0, f64::max);
    let l1 = pts().map(|p| p.1).fold(0.0, f64::max);
    if !(f1 > 0.0 && l1.is_finite() && l1 > 0.0) {
        return Err("no loss to draw".into());
    }
    let mut buf = String::new();
    {
        let root = SVGBackend::with_string(&mut buf, SIZE).into_drawing_area();
        let e = |err: DrawingAreaErrorKind<_>| format!("plot: {err}");
        root.fill(&WHITE).map_err(e)?;
        let mut chart = ChartBuilder::on(&root)
            .margin(10)
            .x_label_area_size(34)
            .y_label_area_size(56)
            .build_cartesian_2d(0.0..f1, 0.0..l1 * 1.08)
            .map_err(|err| format!("plot: {err}"))?;
        chart
            .configure_mesh()
            .x_desc("frequency, GHz")
            .y_desc("loss, dB per 100 mm")
            .x_label_formatter(&ghz_label)
            .y_label_formatter(&|v| format!("{v:.1}"))
            .light_line_style(WHITE.mix(0.0))
            .bold_line_style(RGBColor(0xe2, 0xe4, 0xe6))
            .draw()
            .map_err(|err| format!("plot: {err}"))?;
        for (k, (name, v)) in series.iter().enumerate() {
            let c = SERIES[k % SERIES.len()];
            chart
                .draw_series(LineSeries::new(v.iter().copied(), c.stroke_width(2)))
                .map_err(|err| format!("plot: {err}"))?
                .label(name.clone())
                .legend(move |(x, y)| {
                    PathElement::new(vec![(x, y), (x + 18, y)], c.stroke_width(2))
                });
        }
        chart
            .configure_series_labels()
            .background_style(WHITE.mix(0.9))
            .border_style(RGBColor(0xc8, 0xcc, 0xd0))
            .position(SeriesLabelPosition::UpperLeft)
            .draw()
            .map_err(|err| format!("plot: {err}"))?;
        root.present().map_err(|err| format!("plot: {err}"))?;
    }
    Ok(buf)
}

/// A measured coupon against the model: εeff (upper panel) and loss per
/// 100 mm (lower panel) against frequency, measured as points and the model
/// as a line, the valid range shaded; only points inside it are drawn.
pub fn coupon_plot(pts: &[CouponPoint], range: Option<(f64, f64)>) -> Result<String, String> {
    let f1 = pts.iter().map(|p| p.frequency).fold(0.0, f64::max);
    if pts.is_empty() || !(f1 > 0.0 && f1.is_finite()) {
        return Err("no coupon points to draw".into());
    }
    let fold = |vals: &mut dyn Iterator<Item = f64>| {
        vals.filter(|v| v.is_finite())
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
                (a.min(v), b.max(v))
            })
    };
    // Only the valid points set the scales: the left-out ones may be wild.
    let valid = || pts.iter().filter(|p| p.in_range);
    let (e0, e1) = fold(&mut valid().flat_map(|p| [p.eps_measured, p.eps_model]));
    let (e0, e1) = padded(e0, e1, 0.02);
    let l1 =
        fold(&mut valid().flat_map(|p| [p.loss_measured.unwrap_or(p.loss_model), p.loss_model])).1
            * 0.1;
    if ![e0, e1, l1].iter().all(|v| v.is_finite()) || e1 <= e0 {
        return Err("no drawable range".into());
    }
    let l1 = if l1 > 0.0 { l1 * 1.1 } else { 1.0 };
    let mut buf = String::new();
    {
        let root = SVGBackend::with_string(&mut buf, SIZE).into_drawing_area();
        let e = |err: DrawingAreaErrorKind<_>| format!("plot: {err}");
        root.fill(&WHITE).map_err(e)?;
        let (upper, lower) = root.split_vertically(SIZE.1 / 2);
        for (k, area) in [upper, lower].iter().enumerate() {
            let (y0, y1, name) = if k == 0 {
                (e0, e1, "eps_eff")
            } else {
                (0.0, l1, "dB per 100 mm")
            };
            let mut chart = ChartBuilder::on(area)
                .margin(8)
                .x_label_area_size(30)
                .y_label_area_size(62)
                .build_cartesian_2d(0.0..f1, y0..y1)
                .map_err(|err| format!("plot: {err}"))?;
            chart
                .configure_mesh()
                .x_desc("frequency, GHz")
                .y_desc(name)
                .x_label_formatter(&ghz_label)
                .y_label_formatter(&|v| format!("{v:.2}"))
                .light_line_style(WHITE.mix(0.0))
                .bold_line_style(RGBColor(0xe2, 0xe4, 0xe6))
                .draw()
                .map_err(|err| format!("plot: {err}"))?;
            if let Some((v0, v1)) = range {
                chart
                    .draw_series(std::iter::once(Rectangle::new(
                        [(v0, y0), (v1, y1)],
                        VALID.filled(),
                    )))
                    .map_err(|err| format!("plot: {err}"))?;
            }
            let model = |p: &CouponPoint| {
                if k == 0 {
                    p.eps_model
                } else {
                    p.loss_model * 0.1
                }
            };
            chart
                .draw_series(LineSeries::new(
                    pts.iter().map(|p| (p.frequency, model(p))),
                    MODEL.stroke_width(2),
                ))
                .map_err(|err| format!("plot: {err}"))?;
            chart
                .draw_series(pts.iter().filter(|p| p.in_range).filter_map(|p| {
                    let y = if k == 0 {
                        Some(p.eps_measured)
                    } else {
                        p.loss_measured.map(|l| l * 0.1)
                    };
                    y.filter(|y| (y0..=y1).contains(y))
                        .map(|y| Circle::new((p.frequency, y), 2, DATA.filled()))
                }))
                .map_err(|err| format!("plot: {err}"))?;
        }
        root.present().map_err(|err| format!("plot: {err}"))?;
    }
    Ok(buf)
}
