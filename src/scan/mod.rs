//! Scans: one targeting problem solved over the Cartesian product of ranges
//! of its inputs, every row handed to a [`ScanSink`] (the report layer's
//! writers format CSV, JSON or a table), with the minimum and maximum
//! required speed refined between grid points.
//!
//! Every point goes through [`crate::solve()`], so a scan answers whatever
//! `solve` answers. The speed comes from building each point's [`crate::Problem`]
//! once (not from text): the non-swept inputs are parsed once into a
//! template, and each point only overwrites the swept fields. Inputs without
//! such a shortcut (the body, a launch site, or keys added later) go through
//! [`crate::input::problem::solve_inputs`] per point, as `solve` does; unit tests hold the paths equal.
//!
//! Rows are produced in chunks, in parallel with rayon when the scan is
//! large, and written in grid order by one writer, so the output is
//! byte-for-byte the same as a single-threaded run.
//!
//! The minimum and maximum required speed are found on the grid, then
//! refined along the first swept input with Brent's method (argmin's
//! `BrentOpt`) between the grid neighbours of the best point. At an end of
//! the range the end point is kept when nothing inside beats it, and the
//! summary says the extreme is at the end of the range.
//!
//! (Why this file is long: about 500 of its lines are tests of the engine
//! and its shortcuts, which run whole scans through the writers.)

mod extreme;
mod plan;
mod point;

pub use crate::input::keys::solve_input_kind;
pub use extreme::{Extreme, ExtremeKind, Refinement};
pub use plan::{column_name, Axis, Plan};

use crate::solve::problem::{no_branch_message, BranchChoice, SolutionView};
use extreme::{branch_bit, counts, fold_extreme, GridExtreme};
pub(crate) use extreme::{branch_names, same_speed};
use point::required_speed;
use rayon::prelude::*;
use std::io::Write;

/// Points per chunk: the unit of parallel work and of progress.
const CHUNK: usize = 1024;
/// Chunks computed together before their rows are handed to the writer.
const CHUNKS_PER_BLOCK: usize = 16;
/// Scans smaller than this run on the calling thread.
const PARALLEL_MIN_POINTS: usize = 4096;
/// At most this many points per plotted line (the grid is thinned evenly).
const PLOT_POINTS: usize = 2000;
/// At most this many values of the second swept input get their own lines.
const PLOT_SERIES: usize = 12;

/// Where a scan's rows go: the sink formats, the engine solves, orders and
/// writes. Every method appends bytes; the rows of one chunk of points are
/// formatted on a worker thread (hence `Sync`) into that chunk's buffer,
/// with that chunk's own [`ScanSink::Scratch`], and the engine writes the
/// chunks in grid order.
pub trait ScanSink: Sync {
    /// Per-chunk formatting state (e.g. a cache of formatted numbers).
    type Scratch;
    /// A fresh scratch for one chunk.
    fn scratch(&self) -> Self::Scratch;
    /// Everything before the first row.
    fn header(&self, plan: &Plan, out: &mut Vec<u8>);
    /// The swept-input part of every row of the point at `si` (SI) whose
    /// machine-output values are `out`: written once per point and repeated
    /// before each of its rows.
    fn prefix(&self, plan: &Plan, si: &[f64], out: &[f64], buf: &mut Vec<u8>);
    /// The rest of a row for one kept solution.
    fn solution(
        &self,
        plan: &Plan,
        at: &PointBody,
        s: SolutionView,
        scratch: &mut Self::Scratch,
        buf: &mut Vec<u8>,
    );
    /// The rest of a row for a point without a kept solution.
    fn failure(&self, plan: &Plan, status: &str, message: &str, buf: &mut Vec<u8>);
    /// Bytes the first row starts with that only separate rows (dropped
    /// from the first row, which is formatted before it knows it is first).
    fn row_separator(&self) -> &'static [u8] {
        b""
    }
    /// Everything after the last row.
    fn trailer(&self, plan: &Plan, report: &ScanReport, out: &mut Vec<u8>);
}

/// The body a point was solved about, and its timing altitude: what a
/// sink needs beside the solution to derive more numbers from it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PointBody {
    /// Gravitational parameter, m^3/s^2.
    pub mu_m3_s2: f64,
    /// Surface radius, m.
    pub surface_radius_m: f64,
    /// The point's `--above-alt`, m, if given.
    pub above_alt_m: Option<f64>,
}

/// How to run a scan (what it solves and keeps, not how it is written).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ScanOptions {
    /// Branches kept.
    pub branch: BranchChoice,
    /// Use rayon for large scans (output is identical either way).
    pub parallel: bool,
    /// Keep an evenly thinned set of (speed, angle) samples per line, for a
    /// figure ([`ScanReport::samples`]).
    pub samples: bool,
    /// Let suborbital solutions (those that meet the surface) be the
    /// minimum or maximum required speed. By default the extremes are taken
    /// over the solutions that do not: a suborbital row is still written.
    pub extremes_include_suborbital: bool,
}

impl Default for ScanOptions {
    fn default() -> Self {
        ScanOptions {
            branch: BranchChoice::Both,
            parallel: true,
            samples: false,
            extremes_include_suborbital: false,
        }
    }
}

/// What a scan found.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ScanReport {
    /// Grid points.
    pub points: u64,
    /// Rows written.
    pub rows: u64,
    /// Points with at least one kept solution.
    pub solved: u64,
    /// Points that did not solve for an infeasible target.
    pub infeasible: u64,
    /// Points whose inputs could not be used.
    pub invalid: u64,
    /// Rows left out of the extremes because they are suborbital (0 with
    /// [`ScanOptions::extremes_include_suborbital`]).
    pub suborbital_not_counted: u64,
    /// Lowest required speed.
    pub minimum: Option<Extreme>,
    /// Highest required speed.
    pub maximum: Option<Extreme>,
    /// The thinned samples for a figure, when asked for.
    pub samples: Option<Samples>,
}

/// Thinned samples of a scan for a figure: which grid points were kept
/// and the (speed, angle) found at each.
#[derive(Debug, Clone, PartialEq)]
pub struct Samples {
    /// Which points and lines were sampled.
    pub pick: PlotPick,
    /// One entry per sampled row (or failed sampled point), in no order.
    pub samples: Vec<Sample>,
}

#[derive(Debug, Clone, Default)]
struct Stats {
    rows: u64,
    solved: u64,
    infeasible: u64,
    invalid: u64,
    suborbital_not_counted: u64,
    min: Option<GridExtreme>,
    max: Option<GridExtreme>,
}

impl Stats {
    fn merge(&mut self, o: &Stats) {
        self.rows += o.rows;
        self.solved += o.solved;
        self.infeasible += o.infeasible;
        self.invalid += o.invalid;
        self.suborbital_not_counted += o.suborbital_not_counted;
        if let Some(m) = o.min {
            fold_extreme(&mut self.min, m, 1.0);
        }
        if let Some(m) = o.max {
            fold_extreme(&mut self.max, m, -1.0);
        }
    }
}

/// One plotted value: grid index on the first axis, line, and the speed
/// (m/s) and angle (deg), or `None` where the point did not solve.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Sample {
    /// Grid index on the first axis.
    pub i0: usize,
    /// Index into [`PlotPick::slots`] (the line's second-axis value).
    pub slot: usize,
    /// Branch bit (1 ascending, 2 descending), 0 for a failed point.
    pub branch: u8,
    /// Ordinal of the solution among those of its branch at this point.
    pub ordinal: u8,
    /// Speed (m/s) and flight-path angle (deg), `None` where nothing solved.
    pub value: Option<(f64, f64)>,
    /// Whether that solution is suborbital (its path meets the surface).
    pub suborbital: bool,
}

struct ChunkOut {
    bytes: Vec<u8>,
    stats: Stats,
    samples: Vec<Sample>,
}

/// Which points and lines go into the figure.
#[derive(Debug, Clone, PartialEq)]
pub struct PlotPick {
    /// Every `stride0`-th point of the first axis (and its last).
    pub stride0: usize,
    /// Points on the first axis.
    pub n0: usize,
    /// Grid indices of the second axis that get a line.
    pub slots: Vec<usize>,
}

impl PlotPick {
    fn new(plan: &Plan) -> PlotPick {
        let n0 = plan.axes[0].grid.len();
        let stride0 = n0.div_ceil(PLOT_POINTS).max(1);
        let slots = match plan.axes.get(1) {
            None => vec![0],
            Some(a) if a.grid.len() <= PLOT_SERIES => (0..a.grid.len()).collect(),
            Some(a) => {
                let n = a.grid.len();
                let mut v: Vec<usize> = (0..PLOT_SERIES)
                    .map(|k| ((k * (n - 1)) as f64 / (PLOT_SERIES - 1) as f64).round() as usize)
                    .collect();
                v.dedup();
                v
            }
        };
        PlotPick { stride0, n0, slots }
    }

    fn picks(&self, ix: &[usize]) -> Option<usize> {
        if ix.len() > 2 {
            return None;
        }
        let i0 = ix[0];
        if i0 % self.stride0 != 0 && i0 + 1 != self.n0 {
            return None;
        }
        let i1 = ix.get(1).copied().unwrap_or(0);
        self.slots.binary_search(&i1).ok()
    }
}

impl Plan {
    /// Whether a launch site is among the inputs (then every row carries the
    /// site columns: launch azimuth, burnout point, relative velocity,
    /// inclination).
    pub fn has_site(&self) -> bool {
        self.site
    }

    fn run_chunk<S: ScanSink>(
        &self,
        opts: &ScanOptions,
        sink: &S,
        range: std::ops::Range<usize>,
        pick: Option<&PlotPick>,
        mut bytes: Vec<u8>,
    ) -> ChunkOut {
        bytes.clear();
        let mut stats = Stats::default();
        let mut samples = Vec::new();
        let mut scratch = self.scratch();
        let n = self.axes.len();
        let mut ix = vec![0usize; n];
        let mut si = vec![0f64; n];
        let mut out = vec![0f64; n];
        let mut prefix: Vec<u8> = Vec::with_capacity(64);
        let mut memo = sink.scratch();
        for idx in range {
            self.indices(idx, &mut ix);
            for a in 0..n {
                si[a] = self.axes[a].grid.si(ix[a]);
                out[a] = self.axes[a].grid.out(ix[a]);
            }
            let slot = pick.and_then(|p| p.picks(&ix));
            let result = self.solve_point_fast(&si, &mut scratch);
            prefix.clear();
            sink.prefix(self, &si, &out, &mut prefix);
            let mut solved_here = false;
            match &result {
                Ok(point) => {
                    let at = PointBody {
                        mu_m3_s2: point.mu(),
                        surface_radius_m: point.surface_radius_m(),
                        above_alt_m: point.above_alt_m(),
                    };
                    let mut ordinals = [0u8; 2];
                    let mut best_min: Option<GridExtreme> = None;
                    let mut best_max: Option<GridExtreme> = None;
                    for view in point.views().filter(|v| opts.branch.keeps(v.state.branch)) {
                        solved_here = true;
                        stats.rows += 1;
                        let st = view.state;
                        let bit = branch_bit(st.branch);
                        if counts(opts, view.warnings) {
                            let cand = GridExtreme {
                                speed: required_speed(st, view.site),
                                idx,
                                branches: bit,
                            };
                            fold_extreme(&mut best_min, cand, 1.0);
                            fold_extreme(&mut best_max, cand, -1.0);
                        } else {
                            stats.suborbital_not_counted += 1;
                        }
                        bytes.extend_from_slice(&prefix);
                        sink.solution(self, &at, view, &mut memo, &mut bytes);
                        if let Some(slot) = slot {
                            let o = &mut ordinals[(bit - 1) as usize];
                            samples.push(Sample {
                                i0: ix[0],
                                slot,
                                branch: bit,
                                ordinal: *o,
                                value: Some((st.speed_m_s, st.flight_path_angle_rad.to_degrees())),
                                suborbital: view.warnings.iter().any(|w| {
                                    matches!(
                                        w,
                                        crate::solve::feasibility::Warning::Suborbital { .. }
                                    )
                                }),
                            });
                            *o = o.saturating_add(1);
                        }
                    }
                    if solved_here {
                        stats.solved += 1;
                        if let Some(m) = best_min {
                            fold_extreme(&mut stats.min, m, 1.0);
                        }
                        if let Some(m) = best_max {
                            fold_extreme(&mut stats.max, m, -1.0);
                        }
                    } else {
                        stats.rows += 1;
                        stats.infeasible += 1;
                        bytes.extend_from_slice(&prefix);
                        let found = point.views().map(|v| v.state.branch);
                        let msg = no_branch_message(found, opts.branch);
                        sink.failure(self, "infeasible", &msg, &mut bytes);
                    }
                }
                Err(e) => {
                    stats.rows += 1;
                    // Counted as the row's status says (a solve that did not
                    // converge is `invalid`, not `infeasible`).
                    if e.status() == "infeasible" {
                        stats.infeasible += 1;
                    } else {
                        stats.invalid += 1;
                    }
                    bytes.extend_from_slice(&prefix);
                    sink.failure(self, e.status(), &e.to_string(), &mut bytes);
                }
            }
            if let (Some(slot), false) = (slot, solved_here) {
                samples.push(Sample {
                    i0: ix[0],
                    slot,
                    branch: 0,
                    ordinal: 0,
                    value: None,
                    suborbital: false,
                });
            }
        }
        ChunkOut {
            bytes,
            stats,
            samples,
        }
    }

    /// Runs the scan: every point solved (in parallel when large), its
    /// rows formatted by `sink` and written to `out` in grid order, then the
    /// sink's trailer. `progress` is called with the number of points done
    /// after each block.
    ///
    /// # Errors
    /// Only write errors of `out`: a point that does not solve is a row.
    pub fn run<S: ScanSink, W: Write + Send>(
        &self,
        opts: &ScanOptions,
        sink: &S,
        out: W,
        progress: &mut dyn FnMut(u64),
    ) -> std::io::Result<ScanReport> {
        let mut sink_out = Ordered {
            out,
            separator: sink.row_separator(),
        };
        let mut head = Vec::new();
        sink.header(self, &mut head);
        sink_out.out.write_all(&head)?;
        let pick = opts.samples.then(|| PlotPick::new(self));
        let mut stats = Stats::default();
        let mut samples: Vec<Sample> = Vec::new();
        let total = self.total;
        let block = CHUNK * CHUNKS_PER_BLOCK;
        if !opts.parallel || total < PARALLEL_MIN_POINTS {
            let mut spare = Vec::new();
            let mut start = 0;
            while start < total {
                let end = (start + CHUNK).min(total);
                let c = self.run_chunk(opts, sink, start..end, pick.as_ref(), spare);
                stats.merge(&c.stats);
                samples.extend(c.samples);
                sink_out.write_chunk(&c.bytes)?;
                spare = c.bytes;
                progress(end as u64);
                start = end;
            }
        } else {
            // Written chunks' buffers come back for reuse: fresh pages for
            // every chunk would cost a page fault per 4 KiB written.
            let pool: std::sync::Mutex<Vec<Vec<u8>>> = std::sync::Mutex::new(Vec::new());
            std::thread::scope(|scope| -> std::io::Result<()> {
                let (tx, rx) = std::sync::mpsc::sync_channel::<Vec<Vec<u8>>>(2);
                let pool_ref = &pool;
                let sink_ref = &mut sink_out;
                let writer = scope.spawn(move || -> std::io::Result<()> {
                    for blocks in rx {
                        for b in blocks {
                            sink_ref.write_chunk(&b)?;
                            if let Ok(mut p) = pool_ref.lock() {
                                p.push(b);
                            }
                        }
                    }
                    Ok(())
                });
                let take = || {
                    pool.lock()
                        .ok()
                        .and_then(|mut p| p.pop())
                        .unwrap_or_default()
                };
                let mut start = 0;
                while start < total {
                    let end = (start + block).min(total);
                    let chunks: Vec<ChunkOut> = (start..end)
                        .step_by(CHUNK)
                        .collect::<Vec<_>>()
                        .into_par_iter()
                        .map(|s| {
                            let range = s..(s + CHUNK).min(end);
                            self.run_chunk(opts, sink, range, pick.as_ref(), take())
                        })
                        .collect();
                    let mut bytes = Vec::with_capacity(chunks.len());
                    for c in chunks {
                        stats.merge(&c.stats);
                        samples.extend(c.samples);
                        bytes.push(c.bytes);
                    }
                    if tx.send(bytes).is_err() {
                        break; // the writer stopped on an error, returned below
                    }
                    progress(end as u64);
                    start = end;
                }
                drop(tx);
                writer
                    .join()
                    .unwrap_or_else(|_| Err(std::io::Error::other("the writer thread failed")))
            })?;
        }
        let minimum = stats
            .min
            .map(|m| self.refine(opts, m, ExtremeKind::Minimum));
        let maximum = stats
            .max
            .map(|m| self.refine(opts, m, ExtremeKind::Maximum));
        let report = ScanReport {
            points: total as u64,
            rows: stats.rows,
            solved: stats.solved,
            infeasible: stats.infeasible,
            invalid: stats.invalid,
            suborbital_not_counted: stats.suborbital_not_counted,
            minimum,
            maximum,
            samples: pick.map(|pick| Samples { pick, samples }),
        };
        let mut tail = Vec::new();
        sink.trailer(self, &report, &mut tail);
        sink_out.out.write_all(&tail)?;
        sink_out.out.flush()?;
        Ok(report)
    }
}

/// The destination of the rows, in order. The first row's leading
/// separator ([`ScanSink::row_separator`]) is dropped: rows are formatted in
/// parallel and cannot know whether they come first.
struct Ordered<W> {
    out: W,
    separator: &'static [u8],
}

impl<W: Write> Ordered<W> {
    fn write_chunk(&mut self, bytes: &[u8]) -> std::io::Result<()> {
        let mut b = bytes;
        if !self.separator.is_empty() && !b.is_empty() {
            b = b.strip_prefix(self.separator).unwrap_or(b);
            self.separator = b"";
        }
        self.out.write_all(b)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::input::problem::solve_inputs;
    use crate::input::problem::Inputs;
    use crate::input::units::Kind;
    use crate::report::scan::{ScanFormat, ScanWriter};
    use crate::report::table::DisplayUnits;
    use approx::assert_relative_eq;
    use plan::Setter;
    use point::Point;

    fn inputs(pairs: &[(&str, &str)]) -> Inputs {
        pairs
            .iter()
            .map(|(k, v)| (k.to_string(), v.to_string()))
            .collect()
    }

    /// The engine's options and the writer's, for tests of both together.
    #[derive(Clone, Copy)]
    struct TestOpts {
        format: ScanFormat,
        branch: BranchChoice,
        sensitivities: bool,
        parallel: bool,
        extremes_include_suborbital: bool,
    }

    impl Default for TestOpts {
        fn default() -> Self {
            TestOpts {
                format: ScanFormat::Csv,
                branch: BranchChoice::Both,
                sensitivities: false,
                parallel: true,
                extremes_include_suborbital: false,
            }
        }
    }

    fn run(pairs: &[(&str, &str)], opts: TestOpts) -> (String, ScanReport) {
        let plan = Plan::new(&inputs(pairs)).unwrap();
        let mut out = Vec::new();
        let engine = ScanOptions {
            branch: opts.branch,
            parallel: opts.parallel,
            samples: false,
            extremes_include_suborbital: opts.extremes_include_suborbital,
        };
        let writer = ScanWriter {
            format: opts.format,
            units: DisplayUnits::Si,
            sensitivities: opts.sensitivities,
            branch: opts.branch,
            flight: false,
            title: None,
        };
        let report = plan.run(&engine, &writer, &mut out, &mut |_| {}).unwrap();
        (String::from_utf8(out).unwrap(), report)
    }

    fn csv_rows(text: &str) -> Vec<Vec<String>> {
        csv::ReaderBuilder::new()
            .has_headers(false)
            .from_reader(text.as_bytes())
            .records()
            .map(|r| r.unwrap().iter().map(str::to_string).collect())
            .collect()
    }

    #[test]
    fn shortcut_for_each_swept_input_matches_the_input_reader() {
        let cases: &[&[(&str, &str)]] = &[
            &[
                ("burnout-alt", "150km..600km:150km"),
                ("periapsis-alt", "200"),
                ("apoapsis-alt", "35786"),
            ],
            &[
                ("burnout-radius", "6500km..7000km:100km"),
                ("periapsis-alt", "200"),
                ("apoapsis-alt", "1000"),
            ],
            &[
                ("periapsis-alt", "150..350:50"),
                ("burnout-alt", "300"),
                ("apoapsis-alt", "1000"),
            ],
            &[
                ("apoapsis-radius", "6000..9000:1000"),
                ("burnout-alt", "300"),
                ("periapsis-alt", "200"),
            ],
            &[
                ("sma", "6900..7500:200"),
                ("burnout-alt", "300"),
                ("periapsis-alt", "200"),
            ],
            &[
                ("fpa", "-95..95:5"),
                ("burnout-alt", "300"),
                ("apoapsis-alt", "1000"),
            ],
            &[
                ("zenith", "-10..190:10"),
                ("burnout-alt", "300"),
                ("apoapsis-alt", "1000"),
            ],
            &[
                ("speed", "-1..9:0.5"),
                ("burnout-alt", "300"),
                ("periapsis-alt", "200"),
            ],
            &[
                ("min-periapsis-alt", "100..300:100"),
                ("burnout-alt", "200"),
                ("periapsis-alt", "185"),
                ("apoapsis-alt", "500"),
            ],
        ];
        for pairs in cases {
            let plan = Plan::new(&inputs(pairs)).unwrap();
            assert!(plan.template.is_some(), "{pairs:?}");
            assert_ne!(plan.axes[0].setter, Setter::Text, "{pairs:?}");
            let mut scratch = plan.scratch();
            let mut shortcut_used = 0;
            for idx in 0..plan.len() {
                let si = plan.si_at(idx);
                let mut probe = plan.scratch().unwrap();
                shortcut_used += usize::from(plan.apply(&mut probe, &si));
                let fast = plan.solve_si(&si, &mut scratch);
                let slow = solve_inputs(&plan.inputs_at(&si));
                assert_eq!(fast, slow, "{pairs:?} at {si:?}");
            }
            assert!(shortcut_used > 0, "{pairs:?}: the shortcut was never taken");
        }
    }

    #[test]
    fn plain_pair_points_take_the_lean_path_with_solves_answers() {
        let cases: &[&[(&str, &str)]] = &[
            // Below, at and above the periapsis; low-periapsis warnings.
            &[
                ("burnout-alt", "100km..1000km:12.5km"),
                ("periapsis-alt", "137.5"),
                ("apoapsis-alt", "900"),
            ],
            // Suborbital (periapsis under the surface): warnings on both branches.
            &[
                ("apoapsis-alt", "300..900:100"),
                ("burnout-alt", "250"),
                ("periapsis-radius", "6000"),
            ],
            // Hyperbolic, and a swept C3.
            &[
                ("c3", "-5..15:5"),
                ("burnout-alt", "300"),
                ("periapsis-alt", "250"),
            ],
        ];
        for pairs in cases {
            let plan = Plan::new(&inputs(pairs)).unwrap();
            assert!(plan.lean, "{pairs:?} should take the lean path");
            let mut scratch = plan.scratch();
            let mut warned = 0;
            for idx in 0..plan.len() {
                let si = plan.si_at(idx);
                let fast = plan.solve_point_fast(&si, &mut scratch);
                let full = solve_inputs(&plan.inputs_at(&si));
                match (fast, full) {
                    (Ok(point), Ok(solved)) => {
                        assert!(matches!(point, Point::Lean { .. }));
                        let views: Vec<SolutionView> = point.views().collect();
                        assert_eq!(views.len(), solved.solutions.len(), "{pairs:?} {si:?}");
                        for (v, s) in views.iter().zip(&solved.solutions) {
                            assert_eq!(*v.state, s.state);
                            assert_eq!(*v.sensitivity, s.sensitivity);
                            assert_eq!(v.warnings, s.warnings.as_slice());
                            warned += v.warnings.len();
                        }
                    }
                    (Err(a), Err(b)) => assert_eq!(a, b, "{pairs:?} {si:?}"),
                    (a, b) => panic!("{pairs:?} {si:?}: {:?} vs {b:?}", a.map(|p| p.mu())),
                }
            }
            if pairs[0].0 != "c3" {
                assert!(warned > 0, "{pairs:?}: no warning was compared");
            }
        }
        let angled = Plan::new(&inputs(&[
            ("burnout-alt", "100..200:50"),
            ("fpa", "3"),
            ("apoapsis-alt", "900"),
        ]))
        .unwrap();
        assert!(!angled.lean);
    }

    #[test]
    fn launch_site_scans_take_the_input_readers_road_at_every_point() {
        let plan = Plan::new(&inputs(&[
            ("burnout-alt", "150km..450km:150km"),
            ("periapsis-alt", "200"),
            ("apoapsis-alt", "35786"),
            ("latitude", "28.5"),
            ("azimuth", "90"),
        ]))
        .unwrap();
        assert!(plan.template.is_none() && !plan.lean);
        for idx in 0..plan.len() {
            let si = plan.si_at(idx);
            assert_eq!(
                plan.solve_si(&si, &mut plan.scratch()),
                solve_inputs(&plan.inputs_at(&si))
            );
        }
    }

    #[test]
    fn parallel_and_sequential_scans_write_the_same_bytes() {
        let pairs = [
            ("burnout-alt", "100km..700km/20000"),
            ("periapsis-alt", "185"),
            ("apoapsis-alt", "35786"),
        ];
        let seq = TestOpts {
            parallel: false,
            ..TestOpts::default()
        };
        let (a, ra) = run(&pairs, seq);
        let (b, rb) = run(&pairs, TestOpts::default());
        assert!(a == b, "parallel CSV differs from sequential");
        assert_eq!(ra, rb);
        // 100 km .. 185 km does not reach the periapsis: those are single rows.
        assert!(ra.infeasible > 2000 && ra.solved > 17000, "{ra:?}");
        // No grid point falls exactly on the periapsis: two rows per solved point.
        assert_eq!(ra.rows, ra.infeasible + 2 * ra.solved);
        let ja = run(
            &pairs,
            TestOpts {
                format: ScanFormat::Json,
                ..seq
            },
        )
        .0;
        let jb = run(
            &pairs,
            TestOpts {
                format: ScanFormat::Json,
                ..TestOpts::default()
            },
        )
        .0;
        assert!(ja == jb, "parallel JSON differs from sequential");
    }

    #[test]
    fn two_ranges_give_the_full_product_with_the_last_axis_fastest() {
        let (out, report) = run(
            &[
                ("apoapsis-alt", "500km..40000km:500km"),
                ("burnout-alt", "200km..600km:100km"),
                ("periapsis-alt", "180"),
            ],
            TestOpts::default(),
        );
        assert_eq!(report.points, 5 * 80);
        let rows = csv_rows(&out);
        assert_eq!(rows[0][..3], ["burnout_alt_m", "apoapsis_alt_m", "status"]);
        let mut points: Vec<(String, String)> = rows[1..]
            .iter()
            .map(|r| (r[0].clone(), r[1].clone()))
            .collect();
        assert_eq!(points[0], ("200000".to_string(), "500000".to_string()));
        assert_eq!(points[2], ("200000".to_string(), "1000000".to_string()));
        points.dedup();
        assert_eq!(points.len(), 400);
    }

    #[test]
    fn swept_columns_carry_units_and_never_repeat_a_result_column() {
        assert_eq!(column_name("burnout-alt", Kind::Length), "burnout_alt_m");
        assert_eq!(column_name("fpa", Kind::Angle), "fpa_deg");
        assert_eq!(column_name("c3", Kind::C3), "given_c3_m2_s2");
        assert_eq!(column_name("speed", Kind::Speed), "given_speed_m_s");
        assert_eq!(column_name("ecc", Kind::Ratio), "given_ecc");
        assert_eq!(column_name("period", Kind::Time), "given_period_s");
        assert_eq!(
            column_name("apoapsis-radius", Kind::Length),
            "given_apoapsis_radius_m"
        );
    }

    /// Dense-grid minimum (or maximum) of the required speed over the grid
    /// of `pairs`: (speed, first-axis SI value).
    fn dense(pairs: &[(&str, &str)], kind: ExtremeKind) -> (f64, f64) {
        let plan = Plan::new(&inputs(pairs)).unwrap();
        let mut best = (f64::NAN, f64::NAN);
        for idx in 0..plan.len() {
            if let Ok(s) = plan.solve_point(idx) {
                for sol in &s.solutions {
                    let v = sol.state.speed_m_s;
                    if best.0.is_nan() || kind.sign() * v < kind.sign() * best.0 {
                        best = (v, plan.si_at(idx)[0]);
                    }
                }
            }
        }
        best
    }

    #[test]
    fn interior_minimum_between_grid_points_agrees_with_a_dense_grid() {
        // Burnout 300 km up, target periapsis 200 km, flight-path angle swept.
        // v^2 = 2 mu R (r - R) / (r (r^2 cos^2 g - R^2)) grows with |g|: a
        // horizontal burnout puts burnout at apoapsis, and any climb or dive
        // drops the periapsis unless the speed rises, so the least speed is
        // at g = 0, between the grid points -2 and 1 deg.
        let fixed = [("burnout-alt", "300"), ("periapsis-alt", "200")];
        let (_, report) = run(
            &[fixed[0], fixed[1], ("fpa", "-17deg..23deg:3deg")],
            TestOpts::default(),
        );
        let min = report.minimum.unwrap();
        let (v_dense, x_dense) = dense(
            &[fixed[0], fixed[1], ("fpa", "-2deg..1deg:0.0001deg")],
            ExtremeKind::Minimum,
        );
        assert!(min.refinement.as_ref().unwrap().converged);
        assert_eq!(min.at_end, vec![false]);
        // The dense grid's step is 1.7e-6 rad; Brent's tolerance is finer.
        assert!(
            (min.at_si[0] - x_dense).abs() <= 0.0001f64.to_radians(),
            "{} vs {x_dense}",
            min.at_si[0]
        );
        assert!(min.speed_m_s <= v_dense * (1.0 + 1e-12));
        assert_relative_eq!(min.speed_m_s, v_dense, max_relative = 1e-10);
        assert!(
            min.speed_m_s < min.grid_speed_m_s * (1.0 - 1e-4),
            "refinement moved nothing"
        );
    }

    #[test]
    fn interior_maximum_between_grid_points_agrees_with_a_dense_grid() {
        // Target apoapsis 1000 km from 300 km: v^2 = 2 mu R (R - r) /
        // (r (R^2 - r^2 cos^2 g)) falls with |g| (a steeper climb turns
        // horizontal speed into height), so the greatest speed is at g = 0.
        let fixed = [("burnout-alt", "300"), ("apoapsis-alt", "1000")];
        let (_, report) = run(
            &[fixed[0], fixed[1], ("fpa", "-10deg..11deg:3deg")],
            TestOpts::default(),
        );
        let max = report.maximum.unwrap();
        let (v_dense, x_dense) = dense(
            &[fixed[0], fixed[1], ("fpa", "-1deg..2deg:0.0001deg")],
            ExtremeKind::Maximum,
        );
        assert!((max.at_si[0] - x_dense).abs() <= 0.0001f64.to_radians());
        assert_relative_eq!(max.speed_m_s, v_dense, max_relative = 1e-10);
    }

    #[test]
    fn minimum_at_the_end_of_the_range_is_the_end_point_and_says_so() {
        // A fixed transfer orbit: vis-viva v^2 = mu (2/r - 1/a) falls with r,
        // so the least speed is at the top of the burnout range.
        let fixed = [("periapsis-alt", "200"), ("apoapsis-alt", "35786")];
        let (out, report) = run(
            &[fixed[0], fixed[1], ("burnout-alt", "250km..1000km:50km")],
            TestOpts {
                format: ScanFormat::Table,
                ..TestOpts::default()
            },
        );
        let min = report.minimum.unwrap();
        let (v_dense, x_dense) = dense(
            &[fixed[0], fixed[1], ("burnout-alt", "950km..1000km:0.01km")],
            ExtremeKind::Minimum,
        );
        assert_eq!(min.at_end, vec![true]);
        assert_relative_eq!(min.at_si[0], x_dense, max_relative = 1e-15);
        assert_relative_eq!(min.speed_m_s, v_dense, max_relative = 1e-15);
        assert!(
            out.contains("at the end of the --burnout-alt range; the speed is still falling there"),
            "{out}"
        );
    }

    #[test]
    fn edge_of_the_solved_region_is_reported_not_chased() {
        // Beyond |g| = acos(R / r) = 9.93 deg the periapsis cannot be reached
        // and the required speed runs to infinity at that edge.
        let (_, report) = run(
            &[
                ("burnout-alt", "300"),
                ("periapsis-alt", "200"),
                ("fpa", "-17deg..23deg:3deg"),
            ],
            TestOpts::default(),
        );
        let max = report.maximum.unwrap();
        assert_relative_eq!(max.at_out[0], -8.0);
        assert_relative_eq!(
            max.unsolved_neighbour_si.unwrap(),
            (-11f64).to_radians(),
            max_relative = 1e-15
        );
        assert_eq!(report.infeasible, 8);
    }

    #[test]
    fn usage_error_shared_by_every_point_is_the_scans_error() {
        let plan = Plan::new(&inputs(&[("burnout-alt", "100..200:50")])).unwrap();
        let e = plan.check_structure().unwrap_err().to_string();
        assert!(e.starts_with("nothing to target"), "{e}");
        // A value-dependent usage error (period 0 is not positive) is a row.
        let plan = Plan::new(&inputs(&[
            ("burnout-alt", "300"),
            ("periapsis-alt", "200"),
            ("period", "0..12000:6000"),
        ]))
        .unwrap();
        plan.check_structure().unwrap();
        let (out, report) = run(
            &[
                ("burnout-alt", "300"),
                ("periapsis-alt", "200"),
                ("period", "0..12000:6000"),
            ],
            TestOpts::default(),
        );
        assert_eq!(report.invalid, 1);
        assert!(csv_rows(&out)[1][1] == "invalid");
    }

    #[test]
    fn non_numeric_input_as_a_range_is_rejected_naming_the_flag() {
        let e = Plan::new(&inputs(&[("body", "earth..mars:1"), ("burnout-alt", "1")]))
            .unwrap_err()
            .to_string();
        assert!(e.starts_with("--body does not take a range"), "{e}");
        let e = Plan::new(&inputs(&[("burnout-alt", "300")]))
            .unwrap_err()
            .to_string();
        assert!(e.starts_with("nothing to scan"), "{e}");
    }

    #[test]
    fn json_output_is_one_document_with_a_row_object_per_row() {
        let (out, report) = run(
            &[
                ("burnout-alt", "100km..400km:100km"),
                ("periapsis-alt", "200"),
                ("apoapsis-alt", "1000"),
            ],
            TestOpts {
                format: ScanFormat::Json,
                sensitivities: true,
                ..TestOpts::default()
            },
        );
        let doc: serde_json::Value = serde_json::from_str(&out).unwrap();
        let rows = doc["rows"].as_array().unwrap();
        assert_eq!(rows.len() as u64, report.rows);
        assert_eq!(rows[0]["status"], "infeasible");
        assert!(rows[0]["speed_m_s"].is_null());
        assert_eq!(rows[1]["burnout_alt_m"], 200000);
        assert!(rows[2]["d_apoapsis_radius_m_d_speed_m_s"].as_f64().unwrap() > 0.0);
        assert_eq!(doc["summary"]["solved"], 3);
    }

    #[test]
    fn suborbital_rows_are_rows_but_not_extremes_unless_counted() {
        // Burnout 250 km, apoapsis 800 km, fpa swept: |fpa| >= 3.5 deg puts
        // the periapsis under the surface (10 of the 14 rows).
        let pairs = [
            ("burnout-alt", "250"),
            ("apoapsis-alt", "800"),
            ("fpa", "-10deg..10deg:1.5deg"),
        ];
        let (out, report) = run(&pairs, TestOpts::default());
        assert_eq!(report.rows, 14);
        assert_eq!(report.suborbital_not_counted, 10);
        let rows = csv_rows(&out);
        assert_eq!(rows[1][2].split(' ').next(), Some("suborbital"));
        let min = report.minimum.unwrap();
        assert_relative_eq!(min.at_si[0], (-2.5f64).to_radians(), max_relative = 1e-15);
        assert_relative_eq!(
            min.suborbital_neighbour_si.unwrap(),
            (-4f64).to_radians(),
            max_relative = 1e-15
        );
        // The greatest speed, at the apsis fpa = 0 (vis-viva at periapsis,
        // v^2 = 2 mu ra / (r (r + ra))), is named as apsis states are.
        let max = report.maximum.unwrap();
        assert_eq!(max.branches, vec!["ascending"]);
        assert_eq!(max.at_si[0].to_bits(), 0f64.to_bits());
        let (mu, re) = (3.986004418e14, crate::physics::body::EARTH_RADIUS_M);
        let (r, ra) = (re + 250e3, re + 800e3);
        assert_relative_eq!(
            max.speed_m_s,
            (2.0 * mu * ra / (r * (r + ra))).sqrt(),
            max_relative = 1e-12
        );
        let (_, all) = run(
            &pairs,
            TestOpts {
                extremes_include_suborbital: true,
                ..TestOpts::default()
            },
        );
        assert_eq!(all.suborbital_not_counted, 0);
        let min = all.minimum.unwrap();
        assert_eq!(min.at_end, vec![true]);
        assert_relative_eq!(min.at_si[0], (-10f64).to_radians(), max_relative = 1e-15);
    }

    #[test]
    fn branch_choice_keeps_one_branch_and_marks_points_without_it() {
        let (out, report) = run(
            &[
                ("burnout-alt", "300"),
                ("apoapsis-alt", "1000"),
                ("fpa", "-2deg..2deg:2deg"),
            ],
            TestOpts {
                branch: BranchChoice::Descending,
                ..TestOpts::default()
            },
        );
        let rows = csv_rows(&out);
        assert_eq!(report.solved, 1);
        assert_eq!(rows[1][3], "descending");
        assert_eq!(rows[2][1], "infeasible");
        assert!(
            rows[2][2].starts_with("no solution on the descending branch"),
            "{:?}",
            rows[2]
        );
    }
}
