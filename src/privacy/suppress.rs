//! Small-count suppression, complementary suppression, and an audit.
//!
//! # Primary suppression
//! Counts from 1 to `min_count − 1` are hidden (default `min_count` = 5, i.e.
//! counts 1–4: common practice, no single source; docs/methods.md#privacy \[CP\]). Zeros are
//! shown unless `suppress_zeros`.
//!
//! # Complementary (secondary) suppression
//! A hidden count is worthless if a published total minus the shown cells
//! gives it back. The published totals are: the grand total (always: the
//! number of events is public in practice), each grid row and column (when
//! `publish_row_column_totals`), and each zone group. The heuristic:
//! 1. Any published line with exactly one hidden cell: hide the smallest
//!    shown nonzero cell of that line (ties: lowest index). Zeros are never
//!    hidden as complements, so a reader knows every hidden count is ≥ 1 when
//!    zeros are shown; the audit gives the attacker that knowledge. If the line
//!    has no shown nonzero cell, its total is withheld instead.
//! 2. Repeat 1 until no line has exactly one hidden cell.
//! 3. Run the recovery checks below on the published view. If a hidden cell
//!    is still recoverable, hide the smallest shown nonzero cell on a published
//!    line through it (or withhold one such total if none is left), and go to 1.
//!
//! Each round hides a cell or withholds a total, so it ends; withholding every
//! total leaves nothing to subtract from, so it ends safe.
//!
//! # What the audit checks ([`audit`], [`audit_view`])
//! It sees only what is published (shown counts, hidden flags, published
//! totals) and assumes the attacker knows each hidden count is a whole number
//! ≥ `lower` (1 when zeros are shown, else 0).
//! * **One-hidden lines**: no published line has exactly one hidden cell
//!   (recovery by subtracting one line).
//! * **Linear algebra**: a hidden count is determined by the published totals
//!   when its unit vector lies in the row space of the system "published
//!   lines restricted to hidden cells" (reduced row echelon form). This catches
//!   recovery by combining several lines (e.g. grand total minus row totals).
//! * **Bounds**: interval propagation over the lines with the lower bound
//!   (e.g. two hidden cells ≥ 1 summing to 2 are both 1).
//! * **Exact**: when the number of candidate assignments is within `budget`,
//!   every whole-number assignment consistent with the published totals is
//!   enumerated (depth-first with pruning), giving each hidden cell's exact
//!   feasible range [lo, hi]; lo = hi means recoverable.
//!
//! The heuristic guarantees no recovery by subtracting one line; together
//! with the checks it guarantees no recovery by linear combination and, when
//! the exact enumeration ran, none by whole-number reasoning either. It is not
//! a full linear-programming protection audit: a hidden count may still be
//! narrowed to a small interval (the exact ranges are reported so the page can
//! show them), and differencing against other releases (overlapping areas or
//! periods) is outside its view.
//!
//! # Rates
//! rate = count / population × `rate_per`. A rate is shown only when its
//! count is shown and the population is ≥ `rate_min_population` (default 100:
//! small denominators give unstable rates; docs/methods.md#privacy \[CP\]). A shown rate is
//! flagged unreliable when its count is below `rate_unreliable_below`
//! (default 20: relative SE of a Poisson count 1/√n = 22.4 % at n = 20;
//!  docs/methods.md#privacy \[CP\]).

use super::aggregate::{Aggregation, Layout, LineKind};
use serde::{Deserialize, Serialize};

/// Settings of the suppression step.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct SuppressionParams {
    /// Counts 1..min_count−1 are hidden.
    pub min_count: u64,
    pub suppress_zeros: bool,
    pub publish_row_column_totals: bool,
    pub rate_per: f64,
    pub rate_min_population: f64,
    pub rate_unreliable_below: u64,
    /// Most search nodes the exact audit may visit.
    pub exact_audit_budget: u64,
}

impl Default for SuppressionParams {
    fn default() -> Self {
        SuppressionParams {
            min_count: 5,
            suppress_zeros: false,
            publish_row_column_totals: true,
            rate_per: 1000.0,
            rate_min_population: 100.0,
            rate_unreliable_below: 20,
            exact_audit_budget: 200_000,
        }
    }
}

/// Why a cell is hidden (kept in the page; exports write only "suppressed",
/// since telling primary from complementary would say which counts are small).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Hidden {
    Primary,
    Complementary,
}

/// A cell as published.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TableCell {
    pub id: String,
    pub row: Option<i64>,
    pub col: Option<i64>,
    pub geometry: Vec<Vec<Vec<[f64; 2]>>>,
    /// `None` when suppressed.
    pub count: Option<u64>,
    pub suppressed: bool,
    /// In-page only; never exported.
    pub hidden: Option<Hidden>,
    pub population: Option<f64>,
    pub rate: Option<f64>,
    pub rate_unreliable: bool,
    pub in_area: bool,
}

/// A published (or withheld) total.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TableLine {
    pub name: String,
    pub kind: LineKind,
    pub cells: Vec<usize>,
    /// `None` when withheld.
    pub total: Option<u64>,
}

/// The table after suppression: only what may be published, plus the audit.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SuppressedTable {
    pub layout: Layout,
    pub params: SuppressionParams,
    pub cells: Vec<TableCell>,
    pub lines: Vec<TableLine>,
    /// Events outside every cell or zone; `None` when hidden (1..min_count−1).
    pub outside: Option<u64>,
    pub n_primary: usize,
    pub n_complementary: usize,
    pub totals_withheld: usize,
    pub audit: AuditReport,
    /// What the table shows: cells and events shown and hidden.
    pub shown: ShownSummary,
    pub warnings: Vec<String>,
}

/// Below this share of the cells with events, or of the events, shown, the
/// table warns that it hides most of what it counts: one half, a
/// common-practice threshold \[CP\] (docs/methods.md#privacy).
pub const MIN_SHOWN_SHARE: f64 = 0.5;

/// What a suppressed table shows, beside what it hides. Cells are those
/// written to a file: inside the study area, or holding events.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct ShownSummary {
    pub cells: usize,
    /// Cells whose count is shown (zero counts included when shown).
    pub cells_shown: usize,
    pub cells_hidden_primary: usize,
    pub cells_hidden_complementary: usize,
    /// Cells holding at least one event, and how many of them are shown.
    pub cells_with_events: usize,
    pub cells_with_events_shown: usize,
    /// Events in cells (events outside every cell not included), and how
    /// many of them are in cells whose count is shown.
    pub events_in_cells: u64,
    pub events_in_shown_cells: u64,
    /// `events_in_shown_cells / events_in_cells`; `null` (undefined) when no
    /// cell holds an event.
    pub share_of_events_shown: Option<f64>,
    /// `cells_with_events_shown / cells_with_events`; `null` when no cell
    /// holds an event.
    pub share_of_cells_with_events_shown: Option<f64>,
    /// Events exist but no cell with events is shown: the table tells
    /// nothing about where they are.
    pub nothing_shown: bool,
    /// Less than [`MIN_SHOWN_SHARE`] of the cells with events, or of the
    /// events, is shown.
    pub mostly_hidden: bool,
}

impl ShownSummary {
    fn of(cells: &[TableCell], values: &[u64]) -> ShownSummary {
        let mut s = ShownSummary {
            cells: 0,
            cells_shown: 0,
            cells_hidden_primary: 0,
            cells_hidden_complementary: 0,
            cells_with_events: 0,
            cells_with_events_shown: 0,
            events_in_cells: 0,
            events_in_shown_cells: 0,
            share_of_events_shown: None,
            share_of_cells_with_events_shown: None,
            nothing_shown: false,
            mostly_hidden: false,
        };
        for (c, &v) in cells.iter().zip(values) {
            if !(c.in_area || v > 0) {
                continue;
            }
            s.cells += 1;
            match c.hidden {
                None => s.cells_shown += 1,
                Some(Hidden::Primary) => s.cells_hidden_primary += 1,
                Some(Hidden::Complementary) => s.cells_hidden_complementary += 1,
            }
            if v > 0 {
                s.cells_with_events += 1;
                s.events_in_cells += v;
                if c.hidden.is_none() {
                    s.cells_with_events_shown += 1;
                    s.events_in_shown_cells += v;
                }
            }
        }
        if s.cells_with_events > 0 {
            let e = s.events_in_shown_cells as f64 / s.events_in_cells as f64;
            let c = s.cells_with_events_shown as f64 / s.cells_with_events as f64;
            s.share_of_events_shown = Some(e);
            s.share_of_cells_with_events_shown = Some(c);
            s.nothing_shown = s.cells_with_events_shown == 0;
            s.mostly_hidden = e < MIN_SHOWN_SHARE || c < MIN_SHOWN_SHARE;
        }
        s
    }

    /// The warning for a table that hides everything or most of it, with
    /// what to change; `None` when at least half is shown.
    fn warning(&self, grid: bool, totals_on: bool) -> Option<String> {
        if !self.mostly_hidden {
            return None;
        }
        let mut fix = Vec::new();
        if grid {
            fix.push("use larger cells");
        }
        if totals_on {
            fix.push("turn off the row and column totals (each published total forces more cells to be hidden)");
        }
        if fix.is_empty() {
            fix.push("use larger areas or group zones");
        }
        let fix = fix.join(", or ");
        Some(if self.nothing_shown {
            format!(
                "Nothing is shown: all {} areas with events are hidden, so this table protects \
                 the counts but says nothing about where the {} events are. To show counts, {fix}.",
                self.cells_with_events, self.events_in_cells
            )
        } else {
            format!(
                "Most of the table is hidden: {} of {} areas with events are shown, holding {} of \
                 {} events ({:.0}%). To show more, {fix}.",
                self.cells_with_events_shown,
                self.cells_with_events,
                self.events_in_shown_cells,
                self.events_in_cells,
                100.0 * self.share_of_events_shown.unwrap_or(0.0)
            )
        })
    }
}

/// The feasible range of one hidden cell.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub struct CellRange {
    pub cell: usize,
    pub lo: u64,
    /// `None`: unbounded (in no published total).
    pub hi: Option<u64>,
}

/// Result of the recovery checks.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AuditReport {
    pub lower: u64,
    pub lines_with_one_hidden: Vec<usize>,
    pub determined_by_linear_algebra: Vec<usize>,
    pub pinned_by_bounds: Vec<usize>,
    /// Exact feasible ranges, when the enumeration ran.
    pub exact: Option<Vec<CellRange>>,
    pub exact_recoverable: Vec<usize>,
    pub exact_skipped: Option<String>,
    /// No check found a recoverable cell.
    pub safe: bool,
}

const INF: i64 = i64::MAX / 8;

/// The exact search runs only when at most this many hidden counts appear in
/// published totals (it is exponential in the worst case).
pub const EXACT_MAX_HIDDEN: usize = 60;

/// Applies primary and complementary suppression and audits the result.
///
/// Four zones with counts 3, 9, 12, 30 and the grand total published: the 3
/// is hidden, and so is the 9, or the total would give the 3 back.
/// ```
/// use cloister::privacy::aggregate::{aggregate_zones, Zone};
/// use cloister::privacy::{suppress, SuppressionParams};
/// use cloister::window::Window;
/// let zones: Vec<Zone> = (0..4)
///     .map(|i| Zone {
///         name: format!("z{i}"),
///         polygons: Window::rectangle(i as f64, 0.0, i as f64 + 1.0, 1.0).unwrap().polygons().to_vec(),
///         population: None,
///         group: None,
///     })
///     .collect();
/// let (mut x, mut y) = (vec![], vec![]);
/// for (i, n) in [3, 9, 12, 30].into_iter().enumerate() {
///     x.extend(std::iter::repeat(i as f64 + 0.5).take(n));
///     y.extend(std::iter::repeat(0.5).take(n));
/// }
/// let agg = aggregate_zones(&x, &y, &zones, None).unwrap();
/// let t = suppress(&agg, &SuppressionParams::default());
/// let shown: Vec<Option<u64>> = t.cells.iter().map(|c| c.count).collect();
/// assert_eq!(shown, [None, None, Some(12), Some(30)]);
/// assert_eq!(t.lines[0].total, Some(54));
/// assert!(t.audit.safe);
/// ```
pub fn suppress(agg: &Aggregation, p: &SuppressionParams) -> SuppressedTable {
    let min_count = p.min_count.max(1);
    let values: Vec<u64> = agg.cells.iter().map(|c| c.count).collect();
    let mut hidden: Vec<Option<Hidden>> = values
        .iter()
        .map(|&v| {
            let small = v > 0 && v < min_count;
            (small || (v == 0 && p.suppress_zeros)).then_some(Hidden::Primary)
        })
        .collect();
    let n_primary = hidden.iter().flatten().count();
    let lines: Vec<Vec<usize>> = agg.lines.iter().map(|l| l.cells.clone()).collect();
    let mut published: Vec<bool> = agg
        .lines
        .iter()
        .map(|l| match l.kind {
            LineKind::Row | LineKind::Column => p.publish_row_column_totals,
            LineKind::Group | LineKind::Grand => true,
        })
        .collect();
    let lower = u64::from(!p.suppress_zeros);
    let mut guard = 0usize;
    let mut loop_budget = p.exact_audit_budget;
    loop {
        guard += 1;
        if guard > 4 * (values.len() + lines.len()) + 8 {
            // Cannot happen (each round hides a cell or withholds a total);
            // fall back to withholding every total.
            published.iter_mut().for_each(|b| *b = false);
            break;
        }
        let mut changed = false;
        for li in 0..lines.len() {
            if !published[li] {
                continue;
            }
            let n_hidden = lines[li].iter().filter(|&&c| hidden[c].is_some()).count();
            if n_hidden == 1 {
                match smallest_shown_nonzero(&lines[li], &values, &hidden) {
                    Some(c) => hidden[c] = Some(Hidden::Complementary),
                    None => published[li] = false,
                }
                changed = true;
            }
        }
        if changed {
            continue;
        }
        let view = view_of(&values, &hidden, &lines, &published);
        let rep = audit_view(&view.0, &view.1, lower, loop_budget);
        if rep.exact_skipped.is_some() {
            // Too big once: it only grows as cells are hidden; skip it from now on
            // (the final audit below tries once more and reports).
            loop_budget = 0;
        }
        let bad = rep
            .determined_by_linear_algebra
            .iter()
            .chain(&rep.pinned_by_bounds)
            .chain(&rep.exact_recoverable)
            .copied()
            .next();
        let Some(c) = bad else { break };
        let through: Vec<usize> = (0..lines.len())
            .filter(|&li| published[li] && lines[li].contains(&c))
            .collect();
        let candidate = through
            .iter()
            .filter_map(|&li| smallest_shown_nonzero(&lines[li], &values, &hidden))
            .min_by_key(|&k| (values[k], k));
        match candidate {
            Some(k) => hidden[k] = Some(Hidden::Complementary),
            None => match through.first() {
                Some(&li) => published[li] = false,
                None => break, // not on any published line: cannot be recovered
            },
        }
    }
    let view = view_of(&values, &hidden, &lines, &published);
    let audit = audit_view(&view.0, &view.1, lower, p.exact_audit_budget);
    let cells: Vec<TableCell> = agg
        .cells
        .iter()
        .zip(&hidden)
        .map(|(c, h)| {
            let shown = h.is_none();
            let rate_ok = shown
                && c.population
                    .is_some_and(|pop| pop >= p.rate_min_population && pop > 0.0);
            TableCell {
                id: c.id.clone(),
                row: c.row,
                col: c.col,
                geometry: c.geometry.clone(),
                count: shown.then_some(c.count),
                suppressed: !shown,
                hidden: *h,
                population: c.population,
                rate: rate_ok.then(|| c.count as f64 / c.population.unwrap_or(1.0) * p.rate_per),
                rate_unreliable: rate_ok && c.count < p.rate_unreliable_below,
                in_area: c.in_area,
            }
        })
        .collect();
    let table_lines: Vec<TableLine> = agg
        .lines
        .iter()
        .enumerate()
        .map(|(li, l)| TableLine {
            name: l.name.clone(),
            kind: l.kind,
            cells: l.cells.clone(),
            total: published[li].then(|| l.cells.iter().map(|&c| values[c]).sum()),
        })
        .collect();
    let mut warnings = Vec::new();
    let shown = ShownSummary::of(&cells, &values);
    let grid = agg
        .lines
        .iter()
        .any(|l| matches!(l.kind, LineKind::Row | LineKind::Column));
    if let Some(w) = shown.warning(grid, grid && p.publish_row_column_totals) {
        warnings.push(w);
    }
    let outside = if agg.outside > 0 && agg.outside < min_count {
        warnings.push(format!(
            "fewer than {min_count} events fall outside every cell or zone; that count is \
             hidden, but publishing the overall number of events next to this table reveals it"
        ));
        None
    } else {
        Some(agg.outside)
    };
    if agg
        .lines
        .iter()
        .zip(&published)
        .any(|(l, &pb)| l.kind == LineKind::Grand && !pb)
    {
        warnings.push(
            "the grand total had to be withheld to protect a small count; the number of \
             events shown anywhere else reveals it"
                .into(),
        );
    }
    SuppressedTable {
        layout: agg.layout.clone(),
        params: *p,
        n_complementary: hidden
            .iter()
            .filter(|h| **h == Some(Hidden::Complementary))
            .count(),
        n_primary,
        totals_withheld: published.iter().filter(|b| !**b).count(),
        cells,
        lines: table_lines,
        outside,
        audit,
        shown,
        warnings,
    }
}

fn smallest_shown_nonzero(
    line: &[usize],
    values: &[u64],
    hidden: &[Option<Hidden>],
) -> Option<usize> {
    line.iter()
        .copied()
        .filter(|&c| hidden[c].is_none() && values[c] > 0)
        .min_by_key(|&c| (values[c], c))
}

type View = (Vec<Option<u64>>, Vec<(Vec<usize>, Option<u64>)>);

fn view_of(
    values: &[u64],
    hidden: &[Option<Hidden>],
    lines: &[Vec<usize>],
    published: &[bool],
) -> View {
    let shown = values
        .iter()
        .zip(hidden)
        .map(|(&v, h)| h.is_none().then_some(v))
        .collect();
    let ls = lines
        .iter()
        .zip(published)
        .map(|(l, &pb)| (l.clone(), pb.then(|| l.iter().map(|&c| values[c]).sum())))
        .collect();
    (shown, ls)
}

/// Audits a published table (see module docs).
pub fn audit(table: &SuppressedTable) -> AuditReport {
    let shown: Vec<Option<u64>> = table.cells.iter().map(|c| c.count).collect();
    let lines: Vec<(Vec<usize>, Option<u64>)> = table
        .lines
        .iter()
        .map(|l| (l.cells.clone(), l.total))
        .collect();
    audit_view(
        &shown,
        &lines,
        u64::from(!table.params.suppress_zeros),
        table.params.exact_audit_budget,
    )
}

/// Audits the attacker's view: `shown[c]` is `None` for hidden cells; each
/// line is (cells, published total or `None`); hidden counts are known to be
/// whole numbers ≥ `lower`; the exact search takes at most `budget` steps.
/// Lines naming a cell index ≥ `shown.len()` are ignored.
pub fn audit_view(
    shown: &[Option<u64>],
    lines: &[(Vec<usize>, Option<u64>)],
    lower: u64,
    budget: u64,
) -> AuditReport {
    let hidden: Vec<usize> = (0..shown.len()).filter(|&c| shown[c].is_none()).collect();
    let mut pos = vec![usize::MAX; shown.len()];
    for (k, &c) in hidden.iter().enumerate() {
        pos[c] = k;
    }
    // Published equations over hidden cells: (positions, residual).
    let mut eqs: Vec<(Vec<usize>, i64)> = Vec::new();
    let mut one_hidden = Vec::new();
    for (li, (cells, total)) in lines.iter().enumerate() {
        let Some(t) = total else { continue };
        if cells.iter().any(|&c| c >= shown.len()) {
            // A line naming a cell that does not exist cannot be checked.
            continue;
        }
        let h: Vec<usize> = cells
            .iter()
            .filter(|&&c| shown[c].is_none())
            .map(|&c| pos[c])
            .collect();
        if h.len() == 1 {
            one_hidden.push(li);
        }
        if h.is_empty() {
            continue;
        }
        let s: u64 = cells.iter().filter_map(|&c| shown[c]).sum();
        eqs.push((h, *t as i64 - s as i64));
    }
    let m = hidden.len();
    // Interval propagation.
    let mut lo = vec![lower as i64; m];
    let mut hi = vec![INF; m];
    let consistent = propagate(&eqs, &mut lo, &mut hi);
    let pinned: Vec<usize> = (0..m)
        .filter(|&k| hi[k] < INF && lo[k] >= hi[k])
        .map(|k| hidden[k])
        .collect();
    let determined: Vec<usize> = determined_cells(&eqs, m)
        .into_iter()
        .map(|k| hidden[k])
        .collect();
    let ranges = if consistent {
        exact_ranges(&eqs, &lo, &hi, budget)
    } else {
        Err("the published totals are inconsistent with the shown counts".into())
    };
    let (exact, exact_rec, skipped) = match ranges {
        Ok(r) => {
            let ranges: Vec<CellRange> = (0..m)
                .map(|k| CellRange {
                    cell: hidden[k],
                    lo: r[k].0.max(0) as u64,
                    hi: (r[k].1 < INF).then_some(r[k].1.max(0) as u64),
                })
                .collect();
            let rec = ranges
                .iter()
                .filter(|c| c.hi == Some(c.lo))
                .map(|c| c.cell)
                .collect();
            (Some(ranges), rec, None)
        }
        Err(why) => (None, Vec::new(), Some(why)),
    };
    let safe =
        one_hidden.is_empty() && determined.is_empty() && pinned.is_empty() && exact_rec.is_empty();
    AuditReport {
        lower,
        lines_with_one_hidden: one_hidden,
        determined_by_linear_algebra: determined,
        pinned_by_bounds: pinned,
        exact,
        exact_recoverable: exact_rec,
        exact_skipped: skipped,
        safe,
    }
}

/// Hidden positions whose unit vector lies in the row space of the equations:
/// in the reduced row echelon form, a pivot column whose row has no other
/// nonzero entry.
fn determined_cells(eqs: &[(Vec<usize>, i64)], m: usize) -> Vec<usize> {
    if m == 0 {
        return Vec::new();
    }
    let mut a: Vec<Vec<f64>> = eqs
        .iter()
        .map(|(h, _)| {
            let mut row = vec![0.0; m];
            for &k in h {
                row[k] = 1.0;
            }
            row
        })
        .collect();
    let tol = 1e-9;
    let mut pivots = Vec::new();
    let mut r = 0;
    for col in 0..m {
        if r >= a.len() {
            break;
        }
        let Some(p) = (r..a.len()).max_by(|&i, &j| a[i][col].abs().total_cmp(&a[j][col].abs()))
        else {
            break;
        };
        if a[p][col].abs() < tol {
            continue;
        }
        a.swap(r, p);
        let d = a[r][col];
        for v in a[r].iter_mut() {
            *v /= d;
        }
        let pivot_row = a[r].clone();
        for (i, row) in a.iter_mut().enumerate() {
            if i != r && row[col].abs() > tol {
                let f = row[col];
                for (v, pv) in row.iter_mut().zip(&pivot_row) {
                    *v -= f * pv;
                }
            }
        }
        pivots.push((r, col));
        r += 1;
    }
    pivots
        .into_iter()
        .filter(|&(row, col)| (0..m).all(|j| j == col || a[row][j].abs() < tol))
        .map(|(_, col)| col)
        .collect()
}

/// Tightens `lo`/`hi` over the equations to a fixpoint (each hidden value
/// lies within its line's residual minus the others' bounds). Returns false
/// when the bounds become contradictory (no whole-number solution).
fn propagate(eqs: &[(Vec<usize>, i64)], lo: &mut [i64], hi: &mut [i64]) -> bool {
    for _ in 0..10_000 {
        let mut changed = false;
        for (h, r) in eqs {
            let slo: i64 = h.iter().map(|&k| lo[k]).sum();
            let shi: i64 = h
                .iter()
                .map(|&k| hi[k])
                .fold(0i64, |a, b| a.saturating_add(b));
            if slo > *r || (shi < INF && shi < *r) {
                return false;
            }
            for &k in h {
                let nh = r - (slo - lo[k]);
                if nh < hi[k] {
                    hi[k] = nh;
                    changed = true;
                }
                if shi < INF {
                    let nl = r - (shi - hi[k]);
                    if nl > lo[k] {
                        lo[k] = nl;
                        changed = true;
                    }
                }
                if lo[k] > hi[k] {
                    return false;
                }
            }
        }
        if !changed {
            break;
        }
    }
    true
}

/// Exact feasible [min, max] of each hidden position: the smallest and the
/// largest value for which a whole-number solution of all equations exists,
/// found by depth-first search with bound propagation at every node.
/// Positions in no equation keep (lo, INF).
fn exact_ranges(
    eqs: &[(Vec<usize>, i64)],
    lo: &[i64],
    hi: &[i64],
    budget: u64,
) -> Result<Vec<(i64, i64)>, String> {
    let m = lo.len();
    let mut in_eq = vec![false; m];
    for (h, _) in eqs {
        for &k in h {
            in_eq[k] = true;
        }
    }
    if (0..m).any(|k| in_eq[k] && hi[k] >= INF) {
        return Err("a hidden count has no finite upper bound".into());
    }
    let n_eq = in_eq.iter().filter(|b| **b).count();
    if n_eq > EXACT_MAX_HIDDEN {
        return Err(format!(
            "{n_eq} hidden counts are tied to published totals, more than the {EXACT_MAX_HIDDEN} \
             the exact search handles; only the linear-algebra and bound checks ran"
        ));
    }
    let mut nodes = 0u64;
    let mut out = vec![(0, INF); m];
    for k in 0..m {
        if !in_eq[k] {
            out[k] = (lo[k], INF);
            continue;
        }
        let mut min = None;
        for v in lo[k]..=hi[k] {
            if feasible_with(eqs, lo, hi, k, v, &mut nodes, budget)? {
                min = Some(v);
                break;
            }
        }
        let Some(min) = min else {
            return Err("no whole-number assignment fits the published totals".into());
        };
        let mut max = min;
        for v in (min + 1..=hi[k]).rev() {
            if feasible_with(eqs, lo, hi, k, v, &mut nodes, budget)? {
                max = v;
                break;
            }
        }
        out[k] = (min, max);
    }
    Ok(out)
}

fn feasible_with(
    eqs: &[(Vec<usize>, i64)],
    lo: &[i64],
    hi: &[i64],
    k: usize,
    v: i64,
    nodes: &mut u64,
    budget: u64,
) -> Result<bool, String> {
    let mut l = lo.to_vec();
    let mut h = hi.to_vec();
    l[k] = v;
    h[k] = v;
    search(eqs, &mut l, &mut h, nodes, budget)
}

fn search(
    eqs: &[(Vec<usize>, i64)],
    lo: &mut [i64],
    hi: &mut [i64],
    nodes: &mut u64,
    budget: u64,
) -> Result<bool, String> {
    *nodes += 1;
    if *nodes > budget {
        return Err(format!(
            "more than {budget} search steps; only the linear-algebra and bound checks ran"
        ));
    }
    if !propagate(eqs, lo, hi) {
        return Ok(false);
    }
    // Branch on the open cell (in some equation) with the narrowest range.
    let open = eqs
        .iter()
        .flat_map(|(h, _)| h.iter().copied())
        .filter(|&k| lo[k] < hi[k])
        .min_by_key(|&k| (hi[k] - lo[k], k));
    let Some(k) = open else {
        return Ok(eqs
            .iter()
            .all(|(h, r)| h.iter().map(|&j| lo[j]).sum::<i64>() == *r));
    };
    for v in lo[k]..=hi[k] {
        let mut l = lo.to_vec();
        let mut h = hi.to_vec();
        l[k] = v;
        h[k] = v;
        if search(eqs, &mut l, &mut h, nodes, budget)? {
            return Ok(true);
        }
    }
    Ok(false)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::privacy::aggregate::{Cell, Line};

    /// A rows × cols grid table with row, column and grand-total lines.
    pub(crate) fn grid(values: &[&[u64]]) -> Aggregation {
        let rows = values.len();
        let cols = values[0].len();
        let mut cells = Vec::new();
        for (r, row) in values.iter().enumerate() {
            for (c, &v) in row.iter().enumerate() {
                cells.push(Cell {
                    id: format!("r{r}c{c}"),
                    row: Some(r as i64),
                    col: Some(c as i64),
                    geometry: vec![],
                    count: v,
                    population: None,
                    in_area: true,
                });
            }
        }
        let mut lines = Vec::new();
        for r in 0..rows {
            lines.push(Line {
                name: format!("row {r}"),
                kind: LineKind::Row,
                cells: (0..cols).map(|c| r * cols + c).collect(),
            });
        }
        for c in 0..cols {
            lines.push(Line {
                name: format!("column {c}"),
                kind: LineKind::Column,
                cells: (0..rows).map(|r| r * cols + c).collect(),
            });
        }
        lines.push(Line {
            name: "total".into(),
            kind: LineKind::Grand,
            cells: (0..rows * cols).collect(),
        });
        Aggregation {
            layout: Layout::Grid {
                shape: super::super::CellShape::Square,
                orientation: None,
                cell_size_m: 1.0,
                origin: [0.0, 0.0],
                rows,
                cols,
            },
            cells,
            lines,
            outside: 0,
            total: values.iter().flat_map(|r| r.iter()).sum(),
        }
    }

    #[test]
    fn one_small_cell_gets_complements() {
        let t = suppress(
            &grid(&[&[3, 10, 12], &[8, 20, 9], &[7, 6, 30]]),
            &Default::default(),
        );
        assert_eq!(t.n_primary, 1);
        assert!(t.n_complementary >= 3, "{:?}", t.cells);
        assert!(t.audit.safe, "{:?}", t.audit);
        assert!(t
            .cells
            .iter()
            .all(|c| c.count.is_none_or(|v| v == 0 || v >= 5)));
    }

    #[test]
    fn two_ones_in_a_row_are_not_left_pinned() {
        // Row [1, 1, 20]: hiding just the two ones leaves residual 2 with each
        // ≥ 1, so both would be known to be 1; the bounds check catches it.
        let t = suppress(&grid(&[&[1, 1, 20], &[9, 9, 9]]), &Default::default());
        assert!(t.audit.safe, "{:?}", t.audit);
        let ex = t.audit.exact.as_ref().unwrap();
        assert!(ex.iter().all(|r| r.hi != Some(r.lo)));
    }

    #[test]
    fn lone_event_forces_totals_withheld() {
        let t = suppress(&grid(&[&[0, 0], &[0, 2]]), &Default::default());
        assert!(t.audit.safe);
        // Every total through the lone 2 (row 1, column 1, grand) is withheld;
        // row 0 and column 0 (all zeros) stay published.
        for l in &t.lines {
            assert_eq!(l.total.is_none(), l.cells.contains(&3), "{}", l.name);
        }
        assert!(!t.warnings.is_empty());
    }

    #[test]
    fn linear_algebra_finds_combined_recovery() {
        // Cells a=[0], b=[1] hidden. Lines: {a,b} total 5, {b} alone? No:
        // {a, c} with c shown 2, total 4 → a = 2, then b = 3. Line {a,c} has one
        // hidden cell; and the combination pins b too.
        let shown = [None, None, Some(2)];
        let lines = vec![(vec![0, 1], Some(5)), (vec![0, 2], Some(4))];
        let r = audit_view(&shown, &lines, 1, 1000);
        assert_eq!(r.lines_with_one_hidden, vec![1]);
        let mut d = r.determined_by_linear_algebra.clone();
        d.sort();
        assert_eq!(d, vec![0, 1]);
        assert!(!r.safe);
    }

    #[test]
    fn empty_table() {
        let r = audit_view(&[], &[], 1, 10);
        assert!(r.safe);
    }
}
