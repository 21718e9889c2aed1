//! Material permittivity at any frequency: a causal Djordjevic-Sarkar model
//! fitted to the material's data, with the validated range kept so that
//! extrapolation can be reported.

use stackup_physics::dispersion::{
    DjordjevicSarkar, MultiPoleDebye, Permittivity, DEFAULT_F1, DEFAULT_F2,
};

use crate::model::Material;

/// Policy when a material states no validated range: data are trusted down
/// to a tenth of the lowest data point (Dk changes little downwards)…
pub const UNSTATED_RANGE_BELOW: f64 = 10.0;
/// …and up to twice the highest (a project policy, not a published rule).
pub const UNSTATED_RANGE_ABOVE: f64 = 2.0;

/// Dk and Df of a material at one frequency.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DkAt {
    pub dk: f64,
    pub df: f64,
    /// The frequency lies outside the data's validated range.
    pub extrapolated: bool,
}

/// A data point the causal fit cannot meet (see [`MaterialModel::misfits`]).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PointMisfit {
    /// Index of the point in the material's `points`.
    pub index: usize,
    pub frequency: f64,
    /// The stated values.
    pub dk: f64,
    pub df: f64,
    /// The fitted model's values at the same frequency.
    pub fit_dk: f64,
    pub fit_df: f64,
}

/// Largest relative Dk difference between a point and the causal fit that
/// counts as agreement (common practice, no source: data-sheet Dk is
/// quoted to about ±1 %).
pub const DK_MISFIT: f64 = 0.01;
/// Largest Df difference that counts as agreement: 15 % of the stated Df,
/// and at least 0.0003 (common practice, no source: data-sheet Df values
/// carry one or two significant digits).
pub const DF_MISFIT_REL: f64 = 0.15;
pub const DF_MISFIT_ABS: f64 = 3e-4;

/// The causal model a material's data are fitted with.
#[derive(Debug, Clone)]
enum Wideband {
    /// One Djordjevic-Sarkar term (nearly flat Df).
    Ds(DjordjevicSarkar),
    /// A sum of Debye terms, for a table one term cannot meet.
    Debye(MultiPoleDebye),
}

impl Wideband {
    fn eval(&self, f: f64) -> Option<Permittivity> {
        match self {
            Wideband::Ds(m) => m.eval(f).ok(),
            Wideband::Debye(m) => m.eval(f).ok(),
        }
    }
}

/// A material's wideband model.
#[derive(Debug, Clone)]
pub struct MaterialModel {
    ds: Option<Wideband>,
    /// Fallback when no causal fit exists (e.g. Df too large for the band):
    /// the first data point, held constant.
    constant: (f64, f64),
    pub valid_from: f64,
    pub valid_to: f64,
    /// Why the causal fit was not possible, if it was not.
    pub fit_problem: Option<String>,
    /// The points of a several-point table that one causal
    /// Djordjevic-Sarkar term cannot meet (Dk off by more than
    /// [`DK_MISFIT`], or Df by more than [`DF_MISFIT_REL`] and
    /// [`DF_MISFIT_ABS`]): the numbers use the fit there, not the points.
    pub misfits: Vec<PointMisfit>,
}

impl MaterialModel {
    /// Fit the model: one point by Djordjevic et al. (2001) eqs. 9-11, several
    /// points by least squares (see `stackup_physics::dispersion`); a table
    /// of three or more points that term misses is fitted again with a
    /// multi-pole Debye model, kept when it meets every point. The
    /// validated range is the material's `valid-from`/`valid-to`; when not
    /// given, the project's policy is one decade below the lowest data point
    /// to twice the highest ([`UNSTATED_RANGE_BELOW`], [`UNSTATED_RANGE_ABOVE`]).
    pub fn fit(m: &Material) -> MaterialModel {
        let lo = m.points.first().map_or(1e9, |p| p.frequency) / UNSTATED_RANGE_BELOW;
        let hi = m.points.last().map_or(1e9, |p| p.frequency) * UNSTATED_RANGE_ABOVE;
        let valid_from = m.valid_from.unwrap_or(lo);
        let valid_to = m.valid_to.unwrap_or(hi);
        let pts = crate::model::DkPoint::dielectric_points(&m.points);
        let fitted = if m.points.len() == 1 {
            let p = m.points[0];
            DjordjevicSarkar::fit_one_point_default(p.dk, p.df, p.frequency)
        } else {
            DjordjevicSarkar::fit_table(&pts, DEFAULT_F1, DEFAULT_F2).map(|(ds, _)| ds)
        }
        .and_then(|ds| ds.with_valid_range(valid_from.min(valid_to), valid_to.max(valid_from)));
        let constant = (m.points[0].dk, m.points[0].df);
        match fitted {
            Ok(ds) => {
                let misfits_of = |w: &Wideband| -> Vec<PointMisfit> {
                    m.points
                        .iter()
                        .enumerate()
                        .filter_map(|(index, p)| {
                            let e = w.eval(p.frequency)?;
                            let dk_off = (e.dk - p.dk).abs() > DK_MISFIT * p.dk;
                            let df_off =
                                (e.df - p.df).abs() > (DF_MISFIT_REL * p.df).max(DF_MISFIT_ABS);
                            (dk_off || df_off).then_some(PointMisfit {
                                index,
                                frequency: p.frequency,
                                dk: p.dk,
                                df: p.df,
                                fit_dk: e.dk,
                                fit_df: e.df,
                            })
                        })
                        .collect()
                };
                let ds = Wideband::Ds(ds);
                let misfits = misfits_of(&ds);
                // Points one term cannot meet: a sum of Debye terms, kept
                // only if it meets them all.
                let debye = (!misfits.is_empty() && pts.len() >= 3)
                    .then(|| MultiPoleDebye::fit(&pts).ok())
                    .flatten()
                    .map(Wideband::Debye)
                    .filter(|w| misfits_of(w).is_empty());
                let (model, misfits) = match debye {
                    Some(w) => (w, Vec::new()),
                    None => (ds, misfits),
                };
                MaterialModel {
                    ds: Some(model),
                    constant,
                    valid_from,
                    valid_to,
                    fit_problem: None,
                    misfits,
                }
            }
            Err(e) => MaterialModel {
                ds: None,
                constant,
                valid_from,
                valid_to,
                fit_problem: Some(e.to_string()),
                misfits: Vec::new(),
            },
        }
    }

    /// A table of three or more points that one Djordjevic-Sarkar term
    /// cannot meet but a multi-pole Debye model (causal by construction)
    /// meets within the same tolerances: its number of poles. The data are
    /// then causal; they only vary more across the band than one term can.
    pub fn multi_pole(&self) -> Option<usize> {
        match &self.ds {
            Some(Wideband::Debye(d)) => Some(d.poles.len()),
            _ => None,
        }
    }

    /// Dk and Df at `f`.
    pub fn at(&self, f: f64) -> DkAt {
        let extrapolated = f < self.valid_from * (1.0 - 1e-9) || f > self.valid_to * (1.0 + 1e-9);
        match self.ds.as_ref().and_then(|ds| ds.eval(f)) {
            Some(p) => DkAt {
                dk: p.dk,
                df: p.df,
                extrapolated,
            },
            None => DkAt {
                dk: self.constant.0,
                df: self.constant.1,
                extrapolated,
            },
        }
    }
}
