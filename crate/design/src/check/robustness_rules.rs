//! Rules of the `robustness` section: the disks' skew, the sensitivity entry and the uncertain
//! parameters, checked against the plant's sizes and values.

use super::{scalar, Checker, P};
use crate::plant::Plant;
use crate::spec::{DesignSpec, EntryDoc, EntryRefDoc, UncertainList, Whole};
use crate::uncertainty::{EntryUncertainty, PlantMatrix, UncertaintyModel};
use crate::{PlantEntry, RobustnessSpec, UncertaintySpec};

/// Samples of the uncertainty cloud when none is given.
pub const DEFAULT_SAMPLES: usize = 500;
/// Largest number of samples.
pub const MAX_SAMPLES: usize = 10_000;
/// Largest relative amount of an uncertain entry (100 %: a larger one could change its sign).
pub const MAX_RELATIVE: f64 = 1.0;

fn which(text: &str) -> Result<PlantMatrix, String> {
    match text.trim() {
        "a" | "A" => Ok(PlantMatrix::A),
        "b" | "B" => Ok(PlantMatrix::B),
        other => Err(format!("\"{other}\" is not a plant matrix that can be uncertain; write A or B")),
    }
}

fn sizes(p: Option<&Plant>, m: PlantMatrix) -> Option<(usize, usize)> {
    p.map(|p| match m {
        PlantMatrix::A => (p.states(), p.states()),
        PlantMatrix::B => (p.states(), p.inputs()),
    })
}

fn name(m: PlantMatrix) -> &'static str {
    match m {
        PlantMatrix::A => "A",
        PlantMatrix::B => "B",
    }
}

/// A 1-based row and column, checked against the matrix's size; 0-based out.
fn position(p: Option<&Plant>, m: PlantMatrix, row: u64, column: u64) -> Result<(usize, usize), String> {
    let (r, c) = (usize::try_from(row).unwrap_or(usize::MAX), usize::try_from(column).unwrap_or(usize::MAX));
    if r == 0 || c == 0 {
        return Err(format!("row and column count from 1 (got {row}, {column})"));
    }
    if let Some((rows, cols)) = sizes(p, m) {
        if r > rows || c > cols {
            return Err(format!("{} is {rows}×{cols}: there is no entry at row {row}, column {column}", name(m)));
        }
    }
    Ok((r - 1, c - 1))
}

/// A relative amount: `0.2`, `20%`.
fn relative(text: &str) -> Result<f64, String> {
    let t = text.trim();
    let (number, scale) = match t.strip_suffix('%') {
        Some(x) => (x, 0.01),
        None => (t, 1.0),
    };
    let v = number.trim().parse::<f64>().map_err(|_| format!("\"{t}\" is not a relative amount; write 0.2 or 20%"))? * scale;
    if v > 0.0 && v <= MAX_RELATIVE {
        Ok(v)
    } else {
        Err(format!("{t}: a relative amount must be above 0 and at most 100 % (1.0)"))
    }
}

/// `A 2 1` → the entry.
fn entry_text(text: &str, p: Option<&Plant>) -> Result<PlantEntry, String> {
    let tokens: Vec<&str> = text.split(|c: char| c == ',' || c.is_whitespace()).filter(|t| !t.is_empty()).collect();
    let [m, r, c] = tokens.as_slice() else {
        return Err(format!("\"{}\": write the matrix, the row and the column, such as A 2 1", text.trim()));
    };
    let matrix = which(m)?;
    let num = |t: &str| t.parse::<u64>().map_err(|_| format!("\"{t}\" is not a row or column number"));
    let (row, column) = position(p, matrix, num(r)?, num(c)?)?;
    Ok(PlantEntry { matrix, row, column })
}

/// One line of the uncertain list: `A 2 1 20%` (an entry) or `B 10%` (the whole matrix).
enum Item {
    Entry(EntryUncertainty),
    Whole(PlantMatrix, f64),
}

fn item_text(line: &str, p: Option<&Plant>) -> Result<Item, String> {
    let tokens: Vec<&str> = line.split(|c: char| c == ',' || c.is_whitespace()).filter(|t| !t.is_empty()).collect();
    match tokens.as_slice() {
        [m, r] => Ok(Item::Whole(which(m)?, relative(r)?)),
        [m, row, col, r] => {
            let e = entry_text(&format!("{m} {row} {col}"), p)?;
            Ok(Item::Entry(EntryUncertainty { matrix: e.matrix, row: e.row, column: e.column, relative: relative(r)? }))
        }
        _ => Err(format!("\"{}\": write A 2 1 20% (one entry) or B 10% (the whole matrix, norm-bounded)", line.trim())),
    }
}

fn item_doc(d: &EntryDoc, p: Option<&Plant>) -> Result<Item, String> {
    let matrix = which(&d.matrix)?;
    let r = d.relative.ok_or("give the relative amount (\"relative\": 0.2 for ±20 %)")?;
    let r = relative(&r.to_string())?;
    match (d.row, d.column) {
        (None, None) => Ok(Item::Whole(matrix, r)),
        (Some(row), Some(column)) => {
            let (row, column) = position(p, matrix, row, column)?;
            Ok(Item::Entry(EntryUncertainty { matrix, row, column, relative: r }))
        }
        _ => Err("give both the row and the column (or neither, for the whole matrix)".into()),
    }
}

/// The uncertain items, checked: no zero entry (a relative amount would leave it unchanged), no
/// item twice.
fn model(list: &UncertainList, p: Option<&Plant>) -> Result<UncertaintyModel, String> {
    let items: Vec<Result<Item, String>> = match list {
        UncertainList::Text(t) => t.lines().filter(|l| !l.trim().is_empty()).map(|l| item_text(l, p)).collect(),
        UncertainList::List(v) => v.iter().map(|d| item_doc(d, p)).collect(),
    };
    let mut out = UncertaintyModel::default();
    for (k, item) in items.into_iter().enumerate() {
        let at = |e: String| format!("entry {}: {e}", k + 1);
        match item.map_err(at)? {
            Item::Entry(e) => {
                let value = p.and_then(|p| match e.matrix {
                    PlantMatrix::A => p.a().get((e.row, e.column)).copied(),
                    PlantMatrix::B => p.b().get((e.row, e.column)).copied(),
                });
                if value == Some(0.0) {
                    return Err(at(format!("{}({}, {}) is 0, and a relative amount leaves it 0; mark a nonzero entry, or the whole matrix", name(e.matrix), e.row + 1, e.column + 1)));
                }
                if out.entries.iter().any(|x| x.matrix == e.matrix && x.row == e.row && x.column == e.column) {
                    return Err(at(format!("{}({}, {}) is listed twice", name(e.matrix), e.row + 1, e.column + 1)));
                }
                out.entries.push(e);
            }
            Item::Whole(m, r) => {
                let zero = p.is_some_and(|p| match m {
                    PlantMatrix::A => p.a().iter().all(|v| *v == 0.0),
                    PlantMatrix::B => p.b().iter().all(|v| *v == 0.0),
                });
                if zero {
                    return Err(at(format!("{} is all zeros, and a perturbation relative to its norm leaves it so; mark single entries instead", name(m))));
                }
                if out.matrices.iter().any(|(x, _)| *x == m) {
                    return Err(at(format!("the whole of {} is listed twice", name(m))));
                }
                out.matrices.push((m, r));
            }
        }
    }
    Ok(out)
}

fn whole(v: &Option<Whole>, default: u64) -> Result<u64, String> {
    match v {
        None => Ok(default),
        Some(Whole::Number(x)) => Ok(*x),
        Some(Whole::Text(t)) if t.trim().is_empty() => Ok(default),
        Some(Whole::Text(t)) => t.trim().parse::<u64>().map_err(|_| format!("\"{}\" is not a whole number", t.trim())),
    }
}

/// Reads `robustness` into `out.robustness`.
pub(super) fn robustness(spec: &DesignSpec, plant: Option<&Plant>, out: &mut crate::ControllerSpec, c: &mut Checker) {
    let Some(r) = &spec.robustness else { return };
    let mut rs = RobustnessSpec::default();
    if let Some(v) = &r.disk_skew {
        let checked = scalar(v, "skew").map(|x| {
            x.and_then(|x| {
                if (-1.0..=1.0).contains(&x) {
                    Ok(x)
                } else {
                    Err(format!("{x} is outside −1 to 1; the skew is 0 for gain variations up and down alike, positive to lean toward gain increase, negative toward decrease"))
                }
            })
        });
        if let Some(x) = checked.and_then(|x| c.take(P::DiskSkew, x)) {
            rs.skew = x;
        }
    }
    rs.sensitivity_entry = match &r.sensitivity_entry {
        None => None,
        Some(EntryRefDoc::Text(t)) if t.trim().is_empty() => None,
        Some(EntryRefDoc::Text(t)) => c.take(P::SensitivityEntry, entry_text(t, plant)),
        Some(EntryRefDoc::Entry(d)) => {
            let e = which(&d.matrix).and_then(|m| match (d.row, d.column, d.relative) {
                (Some(row), Some(column), None) => position(plant, m, row, column).map(|(row, column)| PlantEntry { matrix: m, row, column }),
                (_, _, Some(_)) => Err("a relative amount belongs in uncertainty.entries; give the matrix, row and column only".into()),
                _ => Err("give the row and the column of the entry".into()),
            });
            c.take(P::SensitivityEntry, e)
        }
    };
    if let Some(u) = &r.uncertainty {
        let m = match &u.entries {
            None => None,
            Some(UncertainList::Text(t)) if t.trim().is_empty() => None,
            Some(list) => c.take(P::UncertainEntries, model(list, plant)),
        };
        let samples = c.take(
            P::UncertaintySamples,
            whole(&u.samples, DEFAULT_SAMPLES as u64).and_then(|s| {
                if (1..=MAX_SAMPLES as u64).contains(&s) {
                    Ok(s as usize)
                } else {
                    Err(format!("{s} samples: give 1 to {MAX_SAMPLES} (500 is the usual choice)"))
                }
            }),
        );
        let seed = c.take(P::UncertaintySeed, whole(&u.seed, 1).map_err(|e| format!("{e}; the seed picks the sample (the same seed gives the same cloud)")));
        if let (Some(model), Some(samples), Some(seed)) = (m, samples, seed) {
            rs.uncertainty = Some(UncertaintySpec { model, samples, seed });
        }
    }
    out.robustness = rs;
}
