//! Keyboard nudges and pointer drags in map pixels, and a list in one plane edited on a map in
//! another (s-plane list, z-plane map).

#[allow(unused_imports)]
use super::*;

// ---------------------------------------------------------------------------
// Keyboard and pointer
// ---------------------------------------------------------------------------

/// An arrow key.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Direction {
    Left,
    Right,
    Up,
    Down,
}

impl Direction {
    /// The direction to pass to [`nudge`] when `member` is focused: Up and Down swapped for
    /// a pair's lower member (moving it down moves the upper member up), others unchanged.
    pub fn for_member(self, member: Member) -> Direction {
        match (member, self) {
            (Member::Lower, Direction::Up) => Direction::Down,
            (Member::Lower, Direction::Down) => Direction::Up,
            (_, d) => d,
        }
    }
}

/// Keyboard step size.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum StepSize {
    /// [`EditParams::nudge_fraction`] of the span.
    Normal,
    /// [`EditParams::large_nudge_fraction`] of the span.
    Large,
}

/// Why a nudge does nothing.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum NoChangeReason {
    /// Up or Down on a real pole: it stays on the real axis.
    RealPoleStaysOnAxis,
    /// Down on a pair already at (or inside) the axis clearance.
    PairAtAxisClearance,
}

impl fmt::Display for NoChangeReason {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            NoChangeReason::RealPoleStaysOnAxis => write!(
                f,
                "a real pole stays on the real axis; use left and right to move it, or split \
                 two real poles into a pair"
            ),
            NoChangeReason::PairAtAxisClearance => write!(
                f,
                "the pair is as close to the real axis as it can be dragged; merge it to make \
                 two real poles"
            ),
        }
    }
}

/// What a key press does.
#[derive(Debug, Clone, PartialEq)]
pub enum NudgeOutcome {
    /// Apply this edit (an [`Edit::Move`]).
    Edit(Edit),
    /// Nothing to do, and why.
    NoChange(NoChangeReason),
}

/// The frame's larger data span.
///
/// # Errors
/// [`EditError::UnusableFrame`] when it is not a positive finite number.
pub fn frame_span(frame: &Frame) -> Result<f64, EditError> {
    let span = frame.x.range.span().max(frame.y.range.span());
    if span.is_finite() && span > 0.0 {
        Ok(span)
    } else {
        Err(EditError::UnusableFrame)
    }
}

/// Smallest imaginary part a drag or nudge gives a pair in `frame`.
///
/// # Errors
/// [`EditError::UnusableFrame`].
pub fn axis_clearance(frame: &Frame, params: &EditParams) -> Result<f64, EditError> {
    let fraction = params.pair_axis_clearance;
    let fraction = if fraction.is_finite() && fraction > 0.0 { fraction } else { 0.0 };
    Ok(fraction * frame_span(frame)?)
}

/// The keyboard step in data units for `frame`.
///
/// # Errors
/// [`EditError::UnusableFrame`] also when the fraction is not a positive finite number.
pub fn nudge_step(frame: &Frame, step: StepSize, params: &EditParams) -> Result<f64, EditError> {
    let fraction = match step {
        StepSize::Normal => params.nudge_fraction,
        StepSize::Large => params.large_nudge_fraction,
    };
    let distance = fraction * frame_span(frame)?;
    if distance.is_finite() && distance > 0.0 {
        Ok(distance)
    } else {
        Err(EditError::UnusableFrame)
    }
}

/// The edit for one arrow-key press on entry `entry` of `set` (see the
/// [module documentation](self)). Apply the returned edit with [`EditHistory::apply`].
///
/// # Errors
/// [`EditError::NoSuchEntry`] or [`EditError::UnusableFrame`]. A move that overflows to a
/// non-finite position is refused when applied.
pub fn nudge(set: &PoleSet, entry: usize, direction: Direction, step: StepSize, frame: &Frame, params: &EditParams) -> Result<NudgeOutcome, EditError> {
    let current = set.existing(entry)?;
    let distance = nudge_step(frame, step, params)?;
    let z = current.upper();
    let to = match (current, direction) {
        (_, Direction::Left) => Complex64::new(z.re - distance, z.im),
        (_, Direction::Right) => Complex64::new(z.re + distance, z.im),
        (PoleEntry::Real { .. }, Direction::Up | Direction::Down) => return Ok(NudgeOutcome::NoChange(NoChangeReason::RealPoleStaysOnAxis)),
        (PoleEntry::Pair { .. }, Direction::Up) => Complex64::new(z.re, z.im + distance),
        (PoleEntry::Pair { .. }, Direction::Down) => {
            let floor = axis_clearance(frame, params)?;
            if z.im <= floor {
                return Ok(NudgeOutcome::NoChange(NoChangeReason::PairAtAxisClearance));
            }
            Complex64::new(z.re, (z.im - distance).max(floor))
        }
    };
    Ok(NudgeOutcome::Edit(Edit::Move { entry, to }))
}

/// The data position `[re, im]` of a pointer pixel in `frame`, as a complex number.
///
/// # Errors
/// [`EditError::NotFinite`] for a non-finite pointer (or result).
pub fn pointer_position(frame: &Frame, pointer: [f64; 2]) -> Result<Complex64, EditError> {
    let [re, im] = frame.to_data(pointer);
    let z = Complex64::new(re, im);
    require_finite(z)?;
    Ok(z)
}

/// The edit that puts entry `entry` of `set` under the pointer: a real pole at the pointer's
/// real part; a pair with its upper member at the pointer reflected into the upper
/// half-plane and at least [`axis_clearance`] from the axis.
///
/// # Errors
/// [`EditError::NoSuchEntry`], [`EditError::NotFinite`] or [`EditError::UnusableFrame`].
pub fn drag_edit(set: &PoleSet, entry: usize, frame: &Frame, pointer: [f64; 2], params: &EditParams) -> Result<Edit, EditError> {
    let current = set.existing(entry)?;
    let at = pointer_position(frame, pointer)?;
    let to = match current {
        PoleEntry::Real { .. } => Complex64::new(at.re, 0.0),
        PoleEntry::Pair { .. } => Complex64::new(at.re, at.im.abs().max(axis_clearance(frame, params)?)),
    };
    Ok(Edit::Move { entry, to })
}

// ---------------------------------------------------------------------------
// A list in one plane, shown on a map in another
// ---------------------------------------------------------------------------

/// How the plane of the list being edited relates to the plane of the map it is shown on.
///
/// A digital design may be specified by s-plane poles while its map is the z-plane:
/// the map then shows `z = e^{sT}` (the usual pole mapping of a sampled system, e.g.
/// Franklin, Powell & Workman, *Digital Control of Dynamic Systems*, 3rd ed., 1998, §4.3;
/// from memory), and an edit made on the map is brought back with `s = ln z / T` on the
/// principal branch (`0 < Im s < π/T` for the upper member of a pair).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum PlaneMap {
    /// The list is in the map's own plane.
    Same,
    /// The list is in the s-plane; the map is the z-plane of sample time `sample_time` (s).
    SampledFromS { sample_time: f64 },
}

impl PlaneMap {
    /// A list pole's position on the map.
    pub fn to_map(&self, pole: Complex64) -> Complex64 {
        match *self {
            PlaneMap::Same => pole,
            PlaneMap::SampledFromS { sample_time } => crate::plane::z_from_s(pole, sample_time),
        }
    }

    /// The list position of map point `at`; `real` keeps a real pole real.
    ///
    /// # Errors
    /// [`EditError::NotFinite`] (e.g. `z = 0`, or a sample time that is not positive),
    /// [`EditError::NoRealEquivalent`] for a real pole at `z ≤ 0`.
    pub fn from_map(&self, at: Complex64, real: bool) -> Result<Complex64, EditError> {
        let out = match *self {
            PlaneMap::Same => at,
            PlaneMap::SampledFromS { sample_time } => {
                if !(sample_time.is_finite() && sample_time > 0.0) {
                    return Err(EditError::NotFinite);
                }
                if real {
                    if !(at.re > 0.0) {
                        return Err(EditError::NoRealEquivalent { z: at.re });
                    }
                    Complex64::new(at.re.ln() / sample_time, 0.0)
                } else {
                    crate::plane::s_from_z(at, sample_time).ok_or(EditError::NotFinite)?
                }
            }
        };
        require_finite(out)?;
        Ok(out)
    }

    /// `set` as it appears on the map.
    ///
    /// # Errors
    /// [`EditError::PairOnRealAxis`] when a pair lands on the real axis of the map (an
    /// s-plane pair at `Im s = π/T` aliases onto it), [`EditError::NotFinite`].
    pub fn map_set(&self, set: &PoleSet) -> Result<PoleSet, EditError> {
        if *self == PlaneMap::Same {
            return Ok(set.clone());
        }
        let entries = set
            .entries()
            .iter()
            .map(|e| match *e {
                PoleEntry::Real { re } => PoleEntry::Real { re: self.to_map(Complex64::new(re, 0.0)).re },
                PoleEntry::Pair { re, im } => {
                    let z = self.to_map(Complex64::new(re, im));
                    PoleEntry::Pair { re: z.re, im: z.im }
                }
            })
            .collect();
        PoleSet::from_entries(entries)
    }

    /// Brings a map edit back to the list's plane (a [`Edit::Move`]; other edits pass
    /// through).
    ///
    /// # Errors
    /// As [`PlaneMap::from_map`], and [`EditError::NoSuchEntry`].
    pub fn edit_from_map(&self, set: &PoleSet, edit: Edit) -> Result<Edit, EditError> {
        match edit {
            Edit::Move { entry, to } if *self != PlaneMap::Same => {
                let real = !set.existing(entry)?.is_pair();
                Ok(Edit::Move { entry, to: self.from_map(to, real)? })
            }
            other => Ok(other),
        }
    }
}

/// Significant digits kept in a pole placed from the map ([`round_pole`]) by default: the
/// page's display digits ([`crate::design::format::DEFAULT_DIGITS`], five: a resolution of
/// 1e-5 of the pole's magnitude, finer than a pixel on any map that shows it). A reader who
/// picks other display digits gets moves rounded to those.
pub const MAP_EDIT_DIGITS: i32 = crate::design::format::DEFAULT_DIGITS as i32;

/// `z` with both parts rounded to a step of `10^(⌊log10 |z|⌋ − digits + 1)`, so that a pole
/// placed with the pointer reads `-12.346±9.8765j` rather than sixteen digits of pixel noise.
/// Zero and non-finite values are returned unchanged; a real part that rounds to zero stays
/// a (signed) zero and an imaginary part is never rounded to zero when it was not (the step
/// is then halved until it survives), so a pair stays a pair.
pub fn round_pole(z: Complex64, digits: i32) -> Complex64 {
    let size = z.norm();
    if !(size.is_finite() && size > 0.0) {
        return z;
    }
    let mut step = 10f64.powi(size.log10().floor() as i32 - digits.max(1) + 1);
    // Rounded through its decimal text, so that the result is the double nearest the decimal
    // (24.15, not 24.150000000000002 from the product (x / step) · step).
    let round = |x: f64, step: f64| {
        if !(step > 0.0 && step.is_finite()) {
            return x;
        }
        let v = (x / step).round() * step;
        let decimals = (-step.log10()).round().max(0.0) as usize;
        format!("{v:.decimals$}").parse::<f64>().unwrap_or(v)
    };
    let re = round(z.re, step);
    let mut im = round(z.im, step);
    while z.im != 0.0 && im == 0.0 && step > f64::MIN_POSITIVE {
        step /= 10.0;
        im = round(z.im, step);
    }
    let out = Complex64::new(re, if z.im != 0.0 && im == 0.0 { z.im } else { im });
    if out.re.is_finite() && out.im.is_finite() {
        out
    } else {
        z
    }
}

/// A move with its target rounded by [`round_pole`] to the display digits in force
/// ([`crate::design::format::digits`], [`MAP_EDIT_DIGITS`] unless the reader chose others);
/// other edits pass through.
pub fn rounded_move(edit: Edit) -> Edit {
    match edit {
        Edit::Move { entry, to } => Edit::Move { entry, to: round_pole(to, crate::design::format::digits() as i32) },
        other => other,
    }
}

/// [`drag_edit`] for a list shown through `map`: the pointer is read on the map and the
/// move is brought back to the list's plane.
///
/// # Errors
/// As [`drag_edit`] and [`PlaneMap::from_map`].
pub fn drag_edit_mapped(set: &PoleSet, entry: usize, frame: &Frame, pointer: [f64; 2], params: &EditParams, map: PlaneMap) -> Result<Edit, EditError> {
    let shown = map.map_set(set)?;
    let edit = drag_edit(&shown, entry, frame, pointer, params)?;
    map.edit_from_map(set, edit)
}

/// [`nudge`] for a list shown through `map`: the step is taken on the map (so the same
/// keyboard step moves the marker the same number of pixels) and brought back.
///
/// # Errors
/// As [`nudge`] and [`PlaneMap::from_map`].
pub fn nudge_mapped(set: &PoleSet, entry: usize, direction: Direction, step: StepSize, frame: &Frame, params: &EditParams, map: PlaneMap) -> Result<NudgeOutcome, EditError> {
    let shown = map.map_set(set)?;
    match nudge(&shown, entry, direction, step, frame, params)? {
        NudgeOutcome::Edit(edit) => Ok(NudgeOutcome::Edit(map.edit_from_map(set, edit)?)),
        other => Ok(other),
    }
}
