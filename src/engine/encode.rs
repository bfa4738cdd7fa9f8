//! Turning feature columns into a numeric matrix: standardised numbers with median imputation
//! and a missing indicator, one-hot categories with rare levels folded into "other" and a
//! "missing" level. Always fitted on the training rows of a trial only.

use ndarray::{Array2, ShapeBuilder};

use crate::data::{Column, Values, MISSING};

/// A level seen on fewer training rows than this (or than 0.5% of them) is folded into "other".
pub const RARE_LEVEL_ROWS: usize = 5;
/// At most this many levels of one column get a column of their own; the rest fold into "other".
pub const MAX_LEVELS: usize = 30;

#[derive(Debug, Clone)]
enum Part {
    Numeric {
        column: usize,
        median: f64,
        mean: f64,
        scale: f64,
        /// Output offset of the missing indicator, when the training rows had missing cells.
        indicator: Option<usize>,
        offset: usize,
    },
    Categorical {
        column: usize,
        /// Output offset for each level code, `None` for folded levels.
        level_offsets: Vec<Option<usize>>,
        other: Option<usize>,
        missing: Option<usize>,
    },
}

/// An encoding fitted on training rows, applied to any rows of the same columns.
#[derive(Debug, Clone)]
pub struct Encoder {
    parts: Vec<Part>,
    names: Vec<String>,
    /// The encoded columns of each input column, as a range of output indices.
    spans: Vec<std::ops::Range<usize>>,
}

impl Encoder {
    /// Fits the encoding of `columns` on the rows listed in `rows`.
    pub fn fit(columns: &[Column], rows: &[usize]) -> Encoder {
        let mut parts = Vec::with_capacity(columns.len());
        let mut names = Vec::new();
        let mut spans = Vec::with_capacity(columns.len());
        for (c, column) in columns.iter().enumerate() {
            let start = names.len();
            match &*column.values {
                Values::Numeric(values) => {
                    let mut present: Vec<f64> = rows.iter().filter_map(|&i| values[i]).collect();
                    let missing = rows.len() - present.len();
                    let median = median(&mut present).unwrap_or(0.0);
                    let filled = |i: usize| values[i].unwrap_or(median);
                    let n = rows.len().max(1) as f64;
                    let mean = rows.iter().map(|&i| filled(i)).sum::<f64>() / n;
                    let variance = rows
                        .iter()
                        .map(|&i| (filled(i) - mean).powi(2))
                        .sum::<f64>()
                        / n;
                    let scale = if variance > 1e-24 {
                        variance.sqrt()
                    } else {
                        1.0
                    };
                    let offset = names.len();
                    names.push(column.name.clone());
                    let indicator = (missing > 0).then(|| {
                        names.push(format!("{} (missing)", column.name));
                        offset + 1
                    });
                    parts.push(Part::Numeric {
                        column: c,
                        median,
                        mean,
                        scale,
                        indicator,
                        offset,
                    });
                }
                Values::Categorical { levels, codes } => {
                    let mut counts = vec![0usize; levels.len()];
                    let mut missing = 0usize;
                    for &i in rows {
                        match codes[i] {
                            MISSING => missing += 1,
                            code => counts[code as usize] += 1,
                        }
                    }
                    let rare_below =
                        RARE_LEVEL_ROWS.max((rows.len() as f64 * 0.005).ceil() as usize);
                    let mut kept: Vec<usize> = (0..levels.len())
                        .filter(|&l| counts[l] >= rare_below)
                        .collect();
                    kept.sort_by(|&a, &b| counts[b].cmp(&counts[a]).then(a.cmp(&b)));
                    kept.truncate(MAX_LEVELS);
                    kept.sort_unstable();
                    let mut level_offsets = vec![None; levels.len()];
                    for &l in &kept {
                        level_offsets[l] = Some(names.len());
                        names.push(format!("{}={}", column.name, levels[l]));
                    }
                    let folded =
                        (0..levels.len()).any(|l| counts[l] > 0 && level_offsets[l].is_none());
                    let other = folded.then(|| {
                        names.push(format!("{}=(other)", column.name));
                        names.len() - 1
                    });
                    let missing = (missing > 0).then(|| {
                        names.push(format!("{}=(missing)", column.name));
                        names.len() - 1
                    });
                    parts.push(Part::Categorical {
                        column: c,
                        level_offsets,
                        other,
                        missing,
                    });
                }
            }
            spans.push(start..names.len());
        }
        Encoder {
            parts,
            names,
            spans,
        }
    }

    /// The encoded columns that input column `c` became.
    pub fn span(&self, c: usize) -> std::ops::Range<usize> {
        self.spans.get(c).cloned().unwrap_or(0..0)
    }

    /// Number of encoded columns.
    pub fn width(&self) -> usize {
        self.names.len()
    }

    /// Names of the encoded columns.
    pub fn names(&self) -> &[String] {
        &self.names
    }

    /// Encodes the rows listed in `rows` (one matrix row each, in that order).
    pub fn transform(&self, columns: &[Column], rows: &[usize]) -> Array2<f64> {
        // Column-major: the logistic solver multiplies by the transpose, which is then contiguous.
        let mut x = Array2::<f64>::zeros((rows.len(), self.width()).f());
        for part in &self.parts {
            match part {
                Part::Numeric {
                    column,
                    median,
                    mean,
                    scale,
                    indicator,
                    offset,
                } => {
                    let Values::Numeric(values) = &*columns[*column].values else {
                        continue;
                    };
                    for (r, &i) in rows.iter().enumerate() {
                        let value = values[i];
                        x[(r, *offset)] = (value.unwrap_or(*median) - mean) / scale;
                        if let (Some(ind), None) = (indicator, value) {
                            x[(r, *ind)] = 1.0;
                        }
                    }
                }
                Part::Categorical {
                    column,
                    level_offsets,
                    other,
                    missing,
                } => {
                    let Values::Categorical { codes, .. } = &*columns[*column].values else {
                        continue;
                    };
                    for (r, &i) in rows.iter().enumerate() {
                        let target = match codes[i] {
                            MISSING => *missing,
                            code => level_offsets[code as usize].or(*other),
                        };
                        if let Some(t) = target {
                            x[(r, t)] = 1.0;
                        }
                    }
                }
            }
        }
        x
    }
}

/// Median of the values (sorted in place); `None` when empty.
fn median(values: &mut [f64]) -> Option<f64> {
    if values.is_empty() {
        return None;
    }
    values.sort_by(f64::total_cmp);
    let n = values.len();
    Some(if n % 2 == 1 {
        values[n / 2]
    } else {
        (values[n / 2 - 1] + values[n / 2]) / 2.0
    })
}

/// `x` without the encoded columns in `span`, column-major like the encoder's output. Each
/// input column is encoded on its own, so this is exactly the encoding of the other columns.
pub fn without_span(x: &Array2<f64>, span: &std::ops::Range<usize>) -> Array2<f64> {
    let kept: Vec<usize> = (0..x.ncols()).filter(|c| !span.contains(c)).collect();
    let mut out = Array2::<f64>::zeros((x.nrows(), kept.len()).f());
    for (to, &from) in kept.iter().enumerate() {
        out.column_mut(to).assign(&x.column(from));
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn numeric(name: &str, v: Vec<Option<f64>>) -> Column {
        Column {
            name: name.into(),
            values: std::sync::Arc::new(Values::Numeric(v)),
        }
    }

    #[test]
    fn numbers_are_standardised_on_training_rows_only() {
        let col = numeric("x", vec![Some(1.0), Some(3.0), None, Some(100.0)]);
        let enc = Encoder::fit(std::slice::from_ref(&col), &[0, 1, 2]);
        assert_eq!(enc.names(), ["x", "x (missing)"]);
        // Training values 1, 3 and the median 2 for the missing one: mean 2, sd sqrt(2/3).
        let x = enc.transform(std::slice::from_ref(&col), &[0, 2, 3]);
        let sd = (2.0f64 / 3.0).sqrt();
        assert!((x[(0, 0)] - (-1.0 / sd)).abs() < 1e-12);
        assert_eq!(x[(1, 0)], 0.0);
        assert_eq!(x[(1, 1)], 1.0);
        assert!(
            (x[(2, 0)] - 98.0 / sd).abs() < 1e-9,
            "test row is scaled with training figures"
        );
    }

    #[test]
    fn rare_and_unseen_levels_go_to_other() {
        let mut codes = vec![0u32; 20];
        codes.extend([1u32; 6]);
        codes.push(2); // a rare level
        codes.push(MISSING);
        codes.push(3); // a level seen only outside the training rows
        let col = Column {
            name: "c".into(),
            values: std::sync::Arc::new(Values::Categorical {
                levels: vec!["a".into(), "b".into(), "r".into(), "u".into()],
                codes,
            }),
        };
        let training: Vec<usize> = (0..28).collect();
        let enc = Encoder::fit(std::slice::from_ref(&col), &training);
        assert_eq!(enc.names(), ["c=a", "c=b", "c=(other)", "c=(missing)"]);
        let x = enc.transform(std::slice::from_ref(&col), &[26, 27, 28]);
        assert_eq!(x.row(0).to_vec(), vec![0.0, 0.0, 1.0, 0.0]);
        assert_eq!(x.row(1).to_vec(), vec![0.0, 0.0, 0.0, 1.0]);
        assert_eq!(x.row(2).to_vec(), vec![0.0, 0.0, 1.0, 0.0]);
    }
}
