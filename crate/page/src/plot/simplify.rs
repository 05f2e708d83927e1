//! Line simplification for drawing (a corridor of slopes, `O(n)`), and hit-testing.

#[allow(unused_imports)]
use super::*;

/// Simplifies a signal's polyline in pixels for drawing, in `O(n)`:
///
/// 1. at most four points per pixel column — the first, lowest, highest and last, in
///    their order — so that each column's ink is unchanged however dense the samples;
/// 2. then, while `x` increases, a point is dropped when the straight line between the
///    points kept around it passes within `tolerance` pixels (vertically) of it and of
///    every other point it replaces (a corridor of slopes narrowed point by point).
///
/// The first and last points are always kept; where `x` does not increase nothing is
/// dropped. Points must be finite (split a line at its gaps first). See [`Simplifier`]
/// for the same without collecting the input first.
pub fn simplify_polyline(points: &[[f64; 2]], tolerance: f64) -> Vec<[f64; 2]> {
    let mut s = Simplifier::new(tolerance);
    for p in points {
        s.push(*p);
    }
    s.finish()
}

/// A pixel column being binned: its x (floored) and its first, lowest, highest and last
/// points, each with its position in the input.
pub(crate) type ColumnBin = (f64, [(usize, [f64; 2]); 4]);

/// The streaming form of [`simplify_polyline`]: push the points one by one, then
/// [`Simplifier::finish`] returns the kept ones.
#[derive(Debug, Clone)]
pub struct Simplifier {
    tolerance: f64,
    /// The pixel column being binned: its first, lowest, highest and last points with
    /// their positions in the input (to keep their order).
    column: Option<ColumnBin>,
    seen: usize,
    /// Stage 2: the last kept point, the last point accepted after it, and the corridor.
    anchor: Option<[f64; 2]>,
    prev: [f64; 2],
    lo: f64,
    hi: f64,
    out: Vec<[f64; 2]>,
}

impl Simplifier {
    pub fn new(tolerance: f64) -> Simplifier {
        Simplifier { tolerance, column: None, seen: 0, anchor: None, prev: [0.0, 0.0], lo: f64::NEG_INFINITY, hi: f64::INFINITY, out: Vec::new() }
    }

    pub fn push(&mut self, p: [f64; 2]) {
        let k = self.seen;
        self.seen += 1;
        let col = p[0].floor();
        match &mut self.column {
            Some((c, bin)) if *c == col => {
                if p[1] < bin[1].1[1] {
                    bin[1] = (k, p);
                }
                if p[1] > bin[2].1[1] {
                    bin[2] = (k, p);
                }
                bin[3] = (k, p);
            }
            _ => {
                self.flush_column();
                self.column = Some((col, [(k, p); 4]));
            }
        }
    }

    pub(crate) fn flush_column(&mut self) {
        if let Some((_, mut bin)) = self.column.take() {
            bin.sort_by_key(|(k, _)| *k);
            let mut last = usize::MAX;
            for (k, p) in bin {
                if k != last {
                    self.corridor(p);
                    last = k;
                }
            }
        }
    }

    /// Stage 2 for one point.
    pub(crate) fn corridor(&mut self, p: [f64; 2]) {
        let Some(mut anchor) = self.anchor else {
            self.out.push(p);
            self.anchor = Some(p);
            self.prev = p;
            return;
        };
        if !(self.tolerance > 0.0) {
            self.out.push(p);
            self.prev = p;
            return;
        }
        loop {
            let dx = p[0] - anchor[0];
            if dx <= 0.0 {
                // x does not increase: keep the point and start again from it.
                if self.prev != anchor {
                    self.out.push(self.prev);
                }
                self.out.push(p);
                self.anchor = Some(p);
                self.prev = p;
                self.lo = f64::NEG_INFINITY;
                self.hi = f64::INFINITY;
                return;
            }
            let slope = (p[1] - anchor[1]) / dx;
            if slope >= self.lo && slope <= self.hi {
                // The line anchor → p passes every replaced point: p may end the segment.
                self.lo = self.lo.max((p[1] - self.tolerance - anchor[1]) / dx);
                self.hi = self.hi.min((p[1] + self.tolerance - anchor[1]) / dx);
                self.prev = p;
                return;
            }
            // p is outside: the previous point ends the segment and anchors the next
            // (from which p is always inside, so this runs at most twice).
            self.out.push(self.prev);
            anchor = self.prev;
            self.anchor = Some(anchor);
            self.lo = f64::NEG_INFINITY;
            self.hi = f64::INFINITY;
        }
    }

    /// The kept points, in order.
    pub fn finish(mut self) -> Vec<[f64; 2]> {
        self.flush_column();
        if self.anchor.is_some() && self.out.last() != Some(&self.prev) {
            self.out.push(self.prev);
        }
        self.out
    }
}

/// Index of the marker nearest to `pointer` within `radius` pixels (distance
/// `<= radius`); ties go to the lowest index. Markers and pointer are in
/// pixels; non-finite markers are skipped; a non-finite pointer or a negative
/// or NaN radius finds nothing.
pub fn hit_test(pointer: [f64; 2], markers: &[[f64; 2]], radius: f64) -> Option<usize> {
    if !(pointer[0].is_finite() && pointer[1].is_finite() && radius >= 0.0) {
        return None;
    }
    let r2 = radius * radius;
    let mut best: Option<(usize, f64)> = None;
    for (i, m) in markers.iter().enumerate() {
        let (dx, dy) = (m[0] - pointer[0], m[1] - pointer[1]);
        let d2 = dx * dx + dy * dy;
        if !d2.is_finite() || d2 > r2 {
            continue;
        }
        match best {
            Some((_, b)) if d2 >= b => {}
            _ => best = Some((i, d2)),
        }
    }
    best.map(|(i, _)| i)
}
