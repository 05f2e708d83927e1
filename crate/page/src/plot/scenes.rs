//! Scene descriptions: what the display lists are asked to draw (the pole map, the time plots),
//! their frames and the legend flow.

#[allow(unused_imports)]
use super::*;

// ---------------------------------------------------------------------------
// Scene descriptions: what the painter is asked to draw.
// ---------------------------------------------------------------------------

/// Padding around a pole map, as a fraction of its larger extent.
pub const POLE_MAP_PADDING: f64 = 0.12;

/// Hit radius for markers, in CSS pixels.
pub const HIT_RADIUS_PX: f64 = 8.0;

/// A pole map. Points are `[re, im]`. Every field may be omitted in JSON / JS.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct PoleMapScene {
    /// Poles of the plant `A` (or of `Φ` for a digital design).
    pub open_loop: Vec<[f64; 2]>,
    /// Poles of `A - B K`.
    pub closed_loop: Vec<[f64; 2]>,
    /// Closed-loop poles the design could not move (uncontrollable modes).
    pub not_assigned: Vec<[f64; 2]>,
    /// Poles of the observer `A − L C` (`Φ − L C`).
    pub observer: Vec<[f64; 2]>,
    /// Discrete-time map: the stable region is the unit disc, not the left half-plane.
    pub discrete: bool,
    /// Fit the view to the poles alone (the origin and the unit circle may be out of view).
    pub fit_poles: bool,
    /// A point to ring (the pole chosen by keyboard or pointer), if any.
    pub highlight: Option<[f64; 2]>,
    /// The requested closed-loop poles that can be edited on the map (drawn as open
    /// circles over the achieved poles), in the map's plane.
    pub requested: Vec<[f64; 2]>,
    /// Closed-loop poles of a pinned design, for comparison.
    pub pinned: Vec<[f64; 2]>,
    /// The admissible region of a specification, as boundary polylines in data units.
    pub region: Option<RegionShape>,
    /// A fixed view `[re min, re max, im min, im max]` (kept while a pole is dragged, so
    /// that the map does not rescale under the pointer); `None` fits the view to the poles.
    pub view: Option<[f64; 4]>,
    /// Closed-loop poles of the sampled uncertain plants (small dots under everything; not
    /// pickable).
    pub uncertain: Vec<[f64; 2]>,
    /// The plant's (transmission) zeros from the inputs to the outputs C: ○, the trade's
    /// convention.
    pub zeros: Vec<[f64; 2]>,
}

/// The boundary of an admissible pole region, for drawing: each polyline is a list of
/// `[re, im]` points in the map's plane (lines may run far outside the view; the painter
/// clips them). The admissible side is described in `label`.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct RegionShape {
    pub boundaries: Vec<Vec<[f64; 2]>>,
    pub label: String,
}

/// Zeros farther out than this many times the largest pole are left out of the fitted view.
pub const ZERO_VIEW_FACTOR: f64 = 10.0;

/// Poles within this distance of z = 0 may be left out when the view is fitted to the poles
/// (the page's readout calls them `z = 0` at the same distance).
pub const POLE_MAP_ORIGIN: f64 = 1e-6;

/// Which list of a [`PoleMapScene`] a marker belongs to.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum PoleSet {
    OpenLoop,
    ClosedLoop,
    NotAssigned,
    Observer,
    /// A requested pole that can be edited on the map.
    Requested,
    /// A closed-loop pole of the pinned design.
    Pinned,
    /// A closed-loop pole of a sampled uncertain plant.
    Uncertain,
    /// A zero of the plant (from the inputs to the outputs C).
    Zero,
}

impl PoleSet {
    /// The set's name in the pole map's legend.
    pub fn legend_label(self) -> &'static str {
        match self {
            PoleSet::OpenLoop => "open loop",
            PoleSet::NotAssigned => "not assignable",
            PoleSet::ClosedLoop => "closed loop",
            PoleSet::Observer => "observer",
            PoleSet::Requested => "requested (drag)",
            PoleSet::Pinned => "pinned design",
            PoleSet::Uncertain => "uncertain plant (sample)",
            PoleSet::Zero => "plant zero",
        }
    }
}

/// Width assumed for a legend label when laying out the pole map (7 px a character, a little
/// more than the page's 12 px sans-serif takes), so that the frame that maps the pointer and the
/// drawing agree without measuring text.
pub fn approximate_label_width(label: &str) -> f64 {
    7.0 * label.chars().count() as f64
}

/// Where the legend may start: right of the axis title (`Im s`, `Im z`).
const POLE_LEGEND_LEFT_PX: f64 = 8.0 + 7.0 * 4.0 + 16.0;

/// A picked marker.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct PolePick {
    pub set: PoleSet,
    pub index: usize,
    pub re: f64,
    pub im: f64,
}

impl PoleMapScene {
    /// Field names, for front ends that must reject unknown keys themselves.
    pub const FIELDS: &'static [&'static str] =
        &["open_loop", "closed_loop", "not_assigned", "observer", "discrete", "fit_poles", "highlight", "requested", "pinned", "region", "view", "uncertain", "zeros"];

    /// Every finite marker in keyboard order: editable requested poles, closed-loop poles,
    /// observer poles, requested poles that could not be assigned, open-loop poles, the plant's
    /// zeros, then the pinned design's poles; within each set by increasing real part, then decreasing
    /// imaginary part. `index` is the position in the scene's own list.
    pub fn markers(&self) -> Vec<PolePick> {
        let mut out = Vec::new();
        for (set, pts) in [
            (PoleSet::Requested, &self.requested),
            (PoleSet::ClosedLoop, &self.closed_loop),
            (PoleSet::Observer, &self.observer),
            (PoleSet::NotAssigned, &self.not_assigned),
            (PoleSet::OpenLoop, &self.open_loop),
            (PoleSet::Zero, &self.zeros),
            (PoleSet::Pinned, &self.pinned),
        ] {
            let mut picks: Vec<PolePick> = pts.iter().enumerate().filter(|(_, p)| p[0].is_finite() && p[1].is_finite()).map(|(index, p)| PolePick { set, index, re: p[0], im: p[1] }).collect();
            picks.sort_by(|a, b| a.re.total_cmp(&b.re).then(b.im.total_cmp(&a.im)));
            out.extend(picks);
        }
        out
    }

    /// The lists in drawing order (bottom first) with their set tag.
    pub fn layers(&self) -> [(PoleSet, &[[f64; 2]]); 8] {
        [
            (PoleSet::Uncertain, &self.uncertain),
            (PoleSet::Pinned, &self.pinned),
            (PoleSet::OpenLoop, &self.open_loop),
            (PoleSet::Zero, &self.zeros),
            (PoleSet::NotAssigned, &self.not_assigned),
            (PoleSet::Observer, &self.observer),
            (PoleSet::ClosedLoop, &self.closed_loop),
            (PoleSet::Requested, &self.requested),
        ]
    }

    /// The frame the painter uses for a canvas of `outer` size: the fixed [`view`](Self::view)
    /// when set (with equal scale restored for this canvas), else fitted to every layer.
    pub fn frame(&self, outer: Rect) -> Frame {
        let margins = self.margins(outer);
        if let Some([x0, x1, y0, y1]) = self.view.filter(|v| v.iter().all(|x| x.is_finite()) && v[1] > v[0] && v[3] > v[2]) {
            let plot = outer.inset(margins);
            let (re, im) = (Range { min: x0, max: x1 }, Range { min: y0, max: y1 });
            let upp = (re.span() / plot.width).max(im.span() / plot.height);
            if upp.is_finite() && upp > 0.0 {
                return Frame::new(outer, margins, re.with_min_span(upp * plot.width), im.with_min_span(upp * plot.height));
            }
        }
        let all = self.extent_points();
        if self.fit_poles && all.iter().any(|p| p[0].is_finite() && p[1].is_finite()) {
            // Fitting to the poles may leave out those at the origin of the z-plane (deadbeat
            // and delay poles), which would otherwise pull the view to the origin.
            let size = |p: &[f64; 2]| p[0].hypot(p[1]);
            let away: Vec<[f64; 2]> = all.iter().copied().filter(|p| !(self.discrete && size(p) <= POLE_MAP_ORIGIN)).collect();
            let fit = if away.iter().any(|p| p[0].is_finite() && p[1].is_finite()) { away } else { all };
            return Frame::complex_region(outer, margins, &fit, POLE_MAP_PADDING);
        }
        Frame::complex_plane(outer, margins, &all, self.discrete, POLE_MAP_PADDING)
    }

    /// The points the view is fitted to: every layer, except zeros more than
    /// [`ZERO_VIEW_FACTOR`] times farther out than the largest pole (a zero far out, from a small
    /// feedthrough say, would squash every pole into a dot; the zeros table lists it).
    fn extent_points(&self) -> Vec<[f64; 2]> {
        let size = |p: &[f64; 2]| p[0].hypot(p[1]);
        let poles = self.layers().iter().filter(|(set, _)| *set != PoleSet::Zero).flat_map(|(_, pts)| pts.iter().copied()).collect::<Vec<_>>();
        let largest = poles.iter().map(size).filter(|r| r.is_finite()).fold(0.0f64, f64::max);
        let near = self.zeros.iter().copied().filter(|z| largest == 0.0 || size(z) <= ZERO_VIEW_FACTOR * largest);
        poles.iter().copied().chain(near).collect()
    }

    /// The legend's entries in order: the stable region, the admissible region's boundary
    /// (when there is one), then every marker set that has markers.
    pub fn legend_labels(&self) -> Vec<&'static str> {
        let mut out = vec![if self.discrete { "stable: |z| < 1" } else { "stable region" }];
        if self.region.is_some() {
            out.push("admissible boundary");
        }
        out.extend(self.layers().iter().filter(|(_, pts)| !pts.is_empty()).map(|(set, _)| set.legend_label()));
        out
    }

    /// The legend flowed into rows above the plot (see [`flow_legend`]) for a map of width
    /// `outer.width`: per entry its row and x (from [`Self::legend_left`]).
    pub fn legend_flow(&self, outer: Rect) -> Vec<(usize, f64)> {
        let widths: Vec<f64> = self.legend_labels().iter().map(|l| approximate_label_width(l)).collect();
        let right = outer.x + outer.width - Margins::STANDARD.right;
        flow_legend(&widths, (right - self.legend_left(outer)).max(LEGEND_SWATCH_PX + 40.0))
    }

    /// Left end of the legend rows.
    pub fn legend_left(&self, outer: Rect) -> f64 {
        outer.x + POLE_LEGEND_LEFT_PX
    }

    /// The standard margins with room for the legend's rows above the plot.
    fn margins(&self, outer: Rect) -> Margins {
        let rows = self.legend_flow(outer).iter().map(|(r, _)| r + 1).max().unwrap_or(1);
        Margins { top: Margins::STANDARD.top + rows.clamp(1, 6).saturating_sub(1) as f64 * LEGEND_ROW_PX, ..Margins::STANDARD }
    }

    /// The unit circle in pixels (`[centre x, centre y, radius]`) for a discrete map.
    pub fn unit_circle(&self, outer: Rect) -> Option<[f64; 3]> {
        if !self.discrete {
            return None;
        }
        let f = self.frame(outer);
        let c = f.to_pixel([0.0, 0.0]);
        Some([c[0], c[1], f.x.scale().abs()])
    }

    /// The marker under `pointer` (pixels) within [`HIT_RADIUS_PX`]; the top
    /// layer (closed loop) wins exact ties because it is drawn last.
    pub fn pick(&self, outer: Rect, pointer: [f64; 2]) -> Option<PolePick> {
        let frame = self.frame(outer);
        let mut flat: Vec<(PoleSet, usize, [f64; 2])> = Vec::new();
        for (set, pts) in self.layers().iter().rev().filter(|(set, _)| *set != PoleSet::Uncertain) {
            for (i, p) in pts.iter().enumerate() {
                flat.push((*set, i, *p));
            }
        }
        let pixels: Vec<[f64; 2]> = flat.iter().map(|(_, _, p)| frame.to_pixel(*p)).collect();
        let hit = hit_test(pointer, &pixels, HIT_RADIUS_PX)?;
        let (set, index, p) = *flat.get(hit)?;
        Some(PolePick { set, index, re: p[0], im: p[1] })
    }
}

/// One signal on the shared time grid.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct Series {
    pub name: String,
    /// Samples at `TimePlotScene::t`; extra samples beyond `t` are ignored.
    pub values: Vec<f64>,
    /// Palette slot (default: the series' position), so that related signals share a colour.
    pub colour: Option<usize>,
    /// Dash pattern slot: 0 solid, 1 dashed, 2 dotted, 3 dash-dot (default: from the position).
    pub dash: Option<usize>,
    /// A sampled signal held between samples (zero-order hold): drawn as a staircase.
    pub hold: bool,
}

/// A vertical marker at a moment of interest (a reference or load step).
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct EventLine {
    pub time: f64,
    pub label: String,
}

/// By the time's bits (so that reports holding events can be fingerprinted whole).
impl std::hash::Hash for EventLine {
    fn hash<H: std::hash::Hasher>(&self, state: &mut H) {
        self.time.to_bits().hash(state);
        self.label.hash(state);
    }
}

/// A horizontal limit line (e.g. an actuator limit).
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct LimitLine {
    pub value: f64,
    pub label: String,
}

/// A shaded horizontal band (e.g. a settling tolerance around the target).
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct Band {
    pub lower: f64,
    pub upper: f64,
    pub label: String,
}

/// Signals versus time. Every field may be omitted in JSON / JS.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct TimePlotScene {
    /// Sample times, increasing.
    pub t: Vec<f64>,
    pub series: Vec<Series>,
    pub limits: Vec<LimitLine>,
    pub band: Option<Band>,
    /// Vertical markers (drawn when inside the time range).
    pub events: Vec<EventLine>,
    pub x_label: String,
    pub y_label: String,
    /// Signals of a pinned design, each on its own time grid, drawn thin and dashed under
    /// the current ones.
    pub pinned: Vec<PinnedSeries>,
    /// The time window shown (zoomed in); `None` shows the whole run. The vertical axis fits
    /// what is inside the window.
    pub window: Option<[f64; 2]>,
}

/// A signal of a pinned design with its own sample times.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct PinnedSeries {
    pub name: String,
    pub t: Vec<f64>,
    pub values: Vec<f64>,
    /// Palette slot of the current signal it corresponds to.
    pub colour: Option<usize>,
}

/// Vertical padding of a time plot, as a fraction of the value span.
pub const TIME_PLOT_PADDING: f64 = 0.06;

impl TimePlotScene {
    /// Field names, for front ends that must reject unknown keys themselves.
    pub const FIELDS: &'static [&'static str] = &["t", "series", "limits", "band", "events", "x_label", "y_label", "pinned", "window"];

    /// Samples of series `i` paired with their times (`[t, y]`), truncated to
    /// the shorter of the two; non-finite samples are kept (they break lines).
    pub fn points(&self, i: usize) -> Vec<[f64; 2]> {
        match self.series.get(i) {
            Some(s) => self.t.iter().zip(&s.values).map(|(&t, &y)| [t, y]).collect(),
            None => Vec::new(),
        }
    }

    /// Time range (exact, widened if degenerate) and value range (holding all
    /// samples, limits and band, padded).
    pub fn data_ranges(&self) -> (Range, Range) {
        let full = Range::from_values(self.t.iter().copied()).unwrap_or(Range::UNIT);
        let x = match self.window {
            Some([a, b]) if a.is_finite() && b.is_finite() && b > a => Range { min: a.max(full.min), max: b.min(full.max) },
            _ => full,
        };
        let x = if x.span() > 0.0 { x } else { full };
        let samples = (0..self.series.len()).flat_map(|i| self.points(i).into_iter().filter(|p| p[0].is_finite() && x.contains(p[0])).map(|p| p[1]));
        let pinned = self.pinned.iter().flat_map(|p| p.t.iter().zip(&p.values).filter(|(t, _)| t.is_finite() && x.contains(**t)).map(|(_, v)| *v));
        let extra = self.limits.iter().map(|l| l.value).chain(self.band.iter().flat_map(|b| [b.lower, b.upper])).chain(pinned);
        let y = Range::from_values(samples.chain(extra)).unwrap_or(Range { min: -1.0, max: 1.0 });
        (if self.window.is_some() { x } else { x.widened() }, y.padded(TIME_PLOT_PADDING))
    }

    /// The whole run's time range (what a window is zoomed from).
    pub fn time_range(&self) -> Range {
        Range::from_values(self.t.iter().copied()).unwrap_or(Range::UNIT)
    }

    /// The frame the painter uses for a canvas of `outer` size.
    pub fn frame(&self, outer: Rect) -> Frame {
        self.frame_with_legend_rows(outer, 1)
    }

    /// The frame when the legend above the plot takes `rows` rows
    /// ([`LEGEND_ROW_PX`] each beyond the first, which fits the standard margin).
    pub fn frame_with_legend_rows(&self, outer: Rect, rows: usize) -> Frame {
        let (x, y) = self.data_ranges();
        let extra = rows.clamp(1, 12).saturating_sub(1) as f64 * LEGEND_ROW_PX;
        let margins = Margins { top: Margins::STANDARD.top + extra, ..Margins::STANDARD };
        Frame::new(outer, margins, x, y)
    }
}

/// Height of one legend row, in CSS pixels.
pub const LEGEND_ROW_PX: f64 = 17.0;

/// Width of a legend entry's swatch plus the gaps around it, in CSS pixels.
pub const LEGEND_SWATCH_PX: f64 = 32.0;

/// Flows legend entries of the given label widths into right-aligned rows no wider
/// than `available`. Returns, per entry, its row (0 = top) and the x offset of the
/// entry's left edge (swatch included) from the left end of `available`, in entry
/// order; entries keep their order left to right, top to bottom. An entry wider
/// than `available` gets a row of its own.
pub fn flow_legend(label_widths: &[f64], available: f64) -> Vec<(usize, f64)> {
    let avail = if available.is_finite() { available.max(0.0) } else { 0.0 };
    let width = |w: f64| LEGEND_SWATCH_PX + if w.is_finite() { w.max(0.0) } else { 0.0 };
    // Rows of entry indices, filled left to right.
    let mut rows: Vec<Vec<usize>> = Vec::new();
    let mut used = 0.0;
    for (i, w) in label_widths.iter().enumerate() {
        let w = width(*w);
        match rows.last_mut() {
            Some(row) if used + w <= avail => {
                row.push(i);
                used += w;
            }
            _ => {
                rows.push(vec![i]);
                used = w;
            }
        }
    }
    let mut out = vec![(0, 0.0); label_widths.len()];
    for (r, row) in rows.iter().enumerate() {
        let total: f64 = row.iter().filter_map(|i| label_widths.get(*i)).map(|w| width(*w)).sum();
        let mut x = (avail - total).max(0.0);
        for i in row {
            if let (Some(slot), Some(w)) = (out.get_mut(*i), label_widths.get(*i)) {
                *slot = (r, x);
                x += width(*w);
            }
        }
    }
    out
}
