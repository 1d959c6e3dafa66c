//! The exact fast evaluation of case–control (Bernoulli) chance runs.
//!
//! The circles are those of the one builder ([`super::each_circle`]),
//! stored compactly: per list entry only the region's id (`u16` when there
//! are at most 32,768 regions, else `u32`) with its top bit set inside a
//! tie group; no distance and no population. A circle's population is
//! summed on the way from a small per-region array of whole numbers of
//! people, so every comparison is exact. 100 MB hold the 50 million
//! entries of 10,000 events with circles up to half the people.
//!
//! A pass over the lists serves [`LANES`] chance runs at once: the case
//! counts of a region in the eight runs are packed as `u16`s in two words,
//! so one subtraction moves eight running counts. Each centre's list is
//! walked from its far end: the count of the window ending at entry `k` is
//! the circle's total less the cases after `k`, and the population likewise.
//! Writing each window's population into a slot per count, far end first,
//! leaves in every slot the population of the *nearest* (smallest) window
//! with that count for this centre, with stores only (no running minimum
//! to load back); the slots are then folded into the minimum per count
//! over all centres. The largest LLR of a run is, as in the general path,
//! the largest over counts `c` of `LLR(c, smallest population with c)`:
//! the same windows, the same whole numbers, the same maxima bit for bit.
//!
//! Up to 2²⁰ people in the largest circle and fewer than 32,768 cases the
//! slots and fold are replaced by an exact bound ([`Lanes::maxima`]): the
//! lists are walked nearest first in blocks cut at set-up, and a block is
//! passed over when the counts at its end cannot give any of its windows
//! an LLR above the run's maximum so far (a threshold table per lane,
//! indexed by people); other blocks are scored window by window.

use super::{CircleSink, MAX_LIST_ENTRIES};

/// Chance runs per pass over the lists.
pub(super) const LANES: usize = 8;
/// Slots per run: a count is a `u16`, so every index is in range.
const SLOTS: usize = 1 << 16;
/// A slot or count with no window.
const NONE: u32 = u32::MAX;

/// A list entry: a region id with a flag for "inside a tie group".
pub(super) trait Entry: Copy {
    fn make(j: u32, inside: bool) -> Self;
    fn region(self) -> usize;
    fn inside(self) -> bool;
}

impl Entry for u16 {
    fn make(j: u32, inside: bool) -> Self {
        j as u16 | if inside { 0x8000 } else { 0 }
    }
    fn region(self) -> usize {
        (self & 0x7FFF) as usize
    }
    fn inside(self) -> bool {
        self & 0x8000 != 0
    }
}

impl Entry for u32 {
    fn make(j: u32, inside: bool) -> Self {
        j | if inside { 0x8000_0000 } else { 0 }
    }
    fn region(self) -> usize {
        (self & 0x7FFF_FFFF) as usize
    }
    fn inside(self) -> bool {
        self & 0x8000_0000 != 0
    }
}

#[derive(Debug, Clone)]
pub(super) enum Ids {
    Short(Vec<u16>),
    Long(Vec<u32>),
}

/// Circles for the fast case–control chance runs.
#[derive(Debug, Clone)]
pub(super) struct CompactCircles {
    /// `ids[start[i]..start[i+1]]`: centre i's largest circle, nearest first.
    pub start: Vec<usize>,
    pub ids: Ids,
    /// People in each centre's largest circle.
    pub full: Vec<u32>,
    /// People in each region.
    pub people: Vec<u32>,
    /// Cases in all.
    pub cases: u16,
    last: f64,
    /// Whether the chance runs use the bound (see [`Block`]); else the
    /// slots and fold.
    pub(super) bounded: bool,
    /// Blocks of the lists (bounded circles only): centre i's at
    /// `blocks[bstart[i]..bstart[i+1]]`, nearest first.
    blocks: Vec<Block>,
    bstart: Vec<usize>,
    /// The largest circle's population.
    n_max: u32,
}

/// A stretch of one centre's list, cut at set-up for the bound: every
/// window ending in it holds at most the cases up to its end and at least
/// `n1` people.
#[derive(Debug, Clone, Copy)]
struct Block {
    /// People before the block (low 24 bits) and entries (top 8 bits).
    q0_len: u32,
    /// People in the first window ending in the block ([`NONE`]: none does).
    n1: u32,
}

impl Block {
    fn len(self) -> usize {
        (self.q0_len >> 24) as usize
    }
    fn q0(self) -> u32 {
        self.q0_len & 0x00FF_FFFF
    }
}

/// Population up to which the bound is used: its threshold table has an
/// entry per number of people (16 bytes each, 16 MB at most); a block
/// keeps the people before it in 24 bits.
const BOUND_MAX_PEOPLE: f64 = (1u32 << 20) as f64;
/// Cases below which the bound is used (the lane test needs the top bit of
/// each 16-bit count free).
const BOUND_MAX_CASES: u64 = 1 << 15;
/// The top bit of each 16-bit lane.
const HIGH: u64 = 0x8000_8000_8000_8000;

/// Entries in a block starting after `q0` people: about half the square
/// root of the people so far (so the cases it adds stay within about one
/// standard deviation of a chance count), at least 8 and at most 64.
fn block_len(q0: u32) -> usize {
    ((f64::from(q0).sqrt() * 0.5) as usize).clamp(8, 64)
}

impl CompactCircles {
    /// Whether regions with these people (whole numbers) and this many
    /// cases fit the compact form: fewer than 2³¹ regions, fewer than
    /// 2³² − 1 people, fewer than 65,536 cases.
    pub fn fits(people: &[f64], cases: u64) -> bool {
        let total: f64 = people.iter().sum();
        people.len() < (1 << 31)
            && total < f64::from(NONE)
            && cases < 1 << 16
            && people.iter().all(|p| p.fract() == 0.0 && *p >= 0.0)
    }

    /// Circles of regions with these people and cases in all, the largest
    /// holding at most `limit` people.
    pub fn new(people: &[f64], cases: u64, limit: f64) -> CompactCircles {
        let bounded = cases < BOUND_MAX_CASES && limit < BOUND_MAX_PEOPLE;
        CompactCircles {
            start: vec![0],
            ids: if people.len() <= 1 << 15 {
                Ids::Short(Vec::new())
            } else {
                Ids::Long(Vec::new())
            },
            full: Vec::with_capacity(people.len()),
            people: people.iter().map(|&p| p as u32).collect(),
            cases: cases as u16,
            last: 0.0,
            bounded,
            blocks: Vec::new(),
            bstart: vec![0],
            n_max: 0,
        }
    }

    /// Uses the slots and fold instead of the bound (tests of both paths).
    #[cfg(test)]
    pub fn unbound(&mut self) {
        self.bounded = false;
    }

    /// Cuts the centre's list that starts at `s` into blocks.
    fn cut(&mut self, s: usize) {
        fn go<E: Entry>(ids: &[E], people: &[u32], blocks: &mut Vec<Block>) {
            let (mut k, mut q) = (0, 0u32);
            while k < ids.len() {
                let len = block_len(q).min(ids.len() - k);
                let (q0, mut n1) = (q, NONE);
                for &e in &ids[k..k + len] {
                    q += people[e.region()];
                    if n1 == NONE && !e.inside() {
                        n1 = q;
                    }
                }
                blocks.push(Block {
                    q0_len: q0 | (len as u32) << 24,
                    n1,
                });
                k += len;
            }
        }
        match &self.ids {
            Ids::Short(v) => go(&v[s..], &self.people, &mut self.blocks),
            Ids::Long(v) => go(&v[s..], &self.people, &mut self.blocks),
        }
        self.bstart.push(self.blocks.len());
    }

    pub fn len(&self) -> usize {
        match &self.ids {
            Ids::Short(v) => v.len(),
            Ids::Long(v) => v.len(),
        }
    }

    /// Walks centre i's circle nearest first: `f(position, region, people)`
    /// with `people` the circle's population at the end of a tie group and
    /// +∞ inside one (as the general lists store it).
    pub fn walk(&self, i: usize, mut f: impl FnMut(usize, usize, f64)) {
        fn go<E: Entry>(
            ids: &[E],
            s: usize,
            people: &[u32],
            f: &mut impl FnMut(usize, usize, f64),
        ) {
            let mut pop = 0u64;
            for (k, &e) in ids.iter().enumerate() {
                let j = e.region();
                pop += u64::from(people[j]);
                f(
                    s + k,
                    j,
                    if e.inside() {
                        f64::INFINITY
                    } else {
                        pop as f64
                    },
                );
            }
        }
        let (s, e) = (self.start[i], self.start[i + 1]);
        match &self.ids {
            Ids::Short(v) => go(&v[s..e], s, &self.people, &mut f),
            Ids::Long(v) => go(&v[s..e], s, &self.people, &mut f),
        }
    }

    /// The same circles with `u32` ids (as more than 32,768 regions have).
    #[cfg(test)]
    pub fn widen(&mut self) {
        if let Ids::Short(v) = &self.ids {
            self.ids = Ids::Long(
                v.iter()
                    .map(|&e| u32::make(e.region() as u32, e.inside()))
                    .collect(),
            );
        }
    }

    /// Bytes held (lists, starts and per-region arrays).
    pub fn bytes(&self) -> usize {
        let ids = match &self.ids {
            Ids::Short(v) => v.len() * 2,
            Ids::Long(v) => v.len() * 4,
        };
        ids + (self.start.len() + self.bstart.len()) * std::mem::size_of::<usize>()
            + (self.full.len() + self.people.len()) * 4
            + self.blocks.len() * std::mem::size_of::<Block>()
    }
}

impl CircleSink for CompactCircles {
    fn entry(&mut self, j: u32, _d2: f64, group_end: Option<f64>) {
        let inside = group_end.is_none();
        if let Some(p) = group_end {
            self.last = p;
        }
        match &mut self.ids {
            Ids::Short(v) => v.push(u16::make(j, inside)),
            Ids::Long(v) => v.push(u32::make(j, inside)),
        }
    }
    fn end_centre(&mut self) -> usize {
        let n = self.len();
        if self.bounded && n <= MAX_LIST_ENTRIES {
            self.cut(self.start[self.start.len() - 1]);
        }
        self.start.push(n);
        self.full.push(self.last as u32);
        self.n_max = self.n_max.max(self.last as u32);
        self.last = 0.0;
        n.min(MAX_LIST_ENTRIES + 1)
    }
}

/// Scratch of the fast chance runs (one per thread or worker).
pub(super) struct Lanes {
    /// Case counts of the runs in a batch: region j's count in run l is
    /// `packed[j][l / 4] >> (16 · (l % 4))` (16 bits).
    pub packed: Vec<[u64; 2]>,
    /// Run l's slot for count index v at `l·SLOTS + v`.
    slots: Box<[u32; LANES * SLOTS]>,
    /// Smallest population per count, run l at `l·(C+1)..`.
    min_pop: Vec<u32>,
    /// The bound's threshold table: entry `n` holds, packed as the case
    /// counts are, the fewest cases a window of `n` people needs in run l
    /// to come above `m_tab[l]` (less a margin for rounding); see
    /// [`Lanes::maxima`].
    thr: Vec<[u64; 2]>,
    /// The table at the start of a batch (every raised window counts).
    thr0: Vec<[u64; 2]>,
    /// The maximum each lane's table was made for.
    m_tab: [f64; LANES],
    /// `k ln k` for k people from 0 to all (bounded circles only).
    xlnx: Vec<f64>,
    /// Work done so far: blocks walked, blocks redone, windows scored,
    /// tables made (for tests and tuning).
    pub tally: [u64; 4],
}

impl Lanes {
    pub fn new(c: &CompactCircles) -> Lanes {
        Lanes {
            packed: vec![[0; 2]; c.people.len()],
            slots: vec![NONE; LANES * SLOTS]
                .into_boxed_slice()
                .try_into()
                .unwrap_or_else(|_| unreachable!("LANES · SLOTS entries")),
            min_pop: vec![NONE; LANES * (usize::from(c.cases) + 1)],
            thr: Vec::new(),
            thr0: Vec::new(),
            m_tab: [0.0; LANES],
            xlnx: if c.bounded {
                let total: u64 = c.people.iter().map(|&p| u64::from(p)).sum();
                (0..=total)
                    .map(|k| k as f64 * (k as f64).ln().max(0.0))
                    .collect()
            } else {
                Vec::new()
            },
            tally: [0; 4],
        }
    }

    /// The largest LLR over all windows of each run of the batch: `llr(c,
    /// n)` the statistic of a window holding `c` cases among `n` people,
    /// `raised(c, n)` whether its risk is raised (exactly where `llr` may
    /// be above 0), `rounding` a bound on the rounding error of `llr`.
    /// Clears the case counts for the next batch.
    ///
    /// Bounded circles: each centre's list is walked nearest first, block
    /// by block, adding the packed counts. The counts at a block's end are
    /// at least those of every window ending in it, and its first window's
    /// people at most theirs; as the LLR of raised risk grows with the
    /// cases and falls with the people, a block whose end counts are below
    /// the threshold `thr[n1]` (the fewest cases a window of `n1` people
    /// needs to come above the run's maximum so far, less a margin) holds
    /// no window above that maximum and is passed over. Other blocks are
    /// walked again window by window and every window whose count reaches
    /// its threshold is scored with `llr`. So the maximum is the largest
    /// `llr` over all windows: that of the slots and fold (the largest over
    /// counts of `llr` at the smallest population with that count) as long
    /// as `llr` falls with the people at a fixed count, which it does
    /// except within rounding of 0.
    pub fn maxima(
        &mut self,
        circles: &CompactCircles,
        llr: impl Fn(u32, u32) -> f64,
        raised: impl Fn(u32, u32) -> bool,
        rounding: f64,
    ) -> [f64; LANES] {
        let mut m = [0.0f64; LANES];
        if !circles.bounded {
            self.smallest(circles, |l, c, p| m[l] = m[l].max(llr(c as u32, p)));
            return m;
        }
        let size = circles.n_max as usize + 1;
        if self.thr0.len() != size {
            self.thr0 = vec![[0; 2]; size];
            for l in 0..LANES {
                threshold(&mut self.thr0, l, -1.0, circles.cases.into(), &llr, &raised);
            }
            self.thr = self.thr0.clone();
        }
        self.thr.copy_from_slice(&self.thr0);
        self.m_tab = [0.0; LANES];
        match &circles.ids {
            Ids::Short(v) => self.pass_bounded(circles, v, &mut m, &llr, &raised, rounding),
            Ids::Long(v) => self.pass_bounded(circles, v, &mut m, &llr, &raised, rounding),
        }
        self.packed.fill([0; 2]);
        m
    }

    fn pass_bounded<E: Entry>(
        &mut self,
        circles: &CompactCircles,
        ids: &[E],
        m: &mut [f64; LANES],
        llr: &impl Fn(u32, u32) -> f64,
        raised: &impl Fn(u32, u32) -> bool,
        rounding: f64,
    ) {
        let people = &circles.people[..];
        let packed = &self.packed[..];
        let n = circles.full.len();
        self.tally[0] += circles.blocks.len() as u64;
        // The tables are made with the LLR from a table of `k ln k` (the
        // same numbers within rounding, and far quicker).
        let xlnx = &self.xlnx;
        let (cc, total) = (u32::from(circles.cases), xlnx.len() as u32 - 1);
        let at = |k: u32| xlnx[k as usize];
        let l0 = at(cc) + at(total - cc) - at(total);
        // A window holds at most all the controls: for counts too small for
        // that no window exists, and "not above" is safe to say.
        let g = |c: u32, n: u32| {
            if n - c > total - cc {
                return f64::NEG_INFINITY;
            }
            at(c) + at(n - c) - at(n) + at(cc - c) + at(total - n - cc + c) - at(total - n) - l0
        };
        // The tables are remade only now and then (a stale one is only less
        // selective): after a centre, for lanes whose maximum rose by more
        // than 5 %.
        for i in 0..n {
            let (mut a, mut b) = (0u64, 0u64);
            let mut k = circles.start[i];
            let blocks = &circles.blocks[circles.bstart[i]..circles.bstart[i + 1]];

            for blk in blocks {
                let end = k + blk.len();
                let (a0, b0) = (a, b);
                for &e in &ids[k..end] {
                    let p = packed[e.region()];
                    a = a.wrapping_add(p[0]);
                    b = b.wrapping_add(p[1]);
                }
                if blk.n1 != NONE {
                    let t = self.thr[blk.n1 as usize];
                    if (((a | HIGH) - t[0]) | ((b | HIGH) - t[1])) & HIGH != 0 {
                        self.tally[1] += 1;
                        self.tally[2] += windows(
                            &ids[k..end],
                            people,
                            packed,
                            &self.thr,
                            (a0, b0, blk.q0()),
                            m,
                            llr,
                        );
                    }
                }
                k = end;
            }
            for (l, (&ml, tab)) in m.iter().zip(self.m_tab.iter_mut()).enumerate() {
                if ml > *tab * 1.1 + 0.1 {
                    *tab = ml;
                    let t = ml - (rounding + 1e-9 * ml);
                    threshold(&mut self.thr, l, t, circles.cases.into(), &g, raised);
                    self.tally[3] += 1;
                }
            }
        }
    }

    /// Adds run `l`'s case counts per region.
    pub fn set(&mut self, l: usize, cases: &[u32]) {
        let shift = 16 * (l % 4) as u32;
        for (p, &c) in self.packed.iter_mut().zip(cases) {
            p[l / 4] |= u64::from(c) << shift;
        }
    }

    /// The smallest population of a window holding exactly `c` cases, for
    /// every run of the batch: `f(run, c, people)` for each count `c ≥ 1`
    /// that some window has. Clears the case counts for the next batch.
    pub fn smallest(&mut self, circles: &CompactCircles, mut f: impl FnMut(usize, usize, u32)) {
        self.min_pop.fill(NONE);
        match &circles.ids {
            Ids::Short(v) => self.pass(circles, v),
            Ids::Long(v) => self.pass(circles, v),
        }
        let w = usize::from(circles.cases) + 1;
        for (l, mp) in self.min_pop.chunks_exact(w).enumerate() {
            for (c, &p) in mp.iter().enumerate().skip(1) {
                if p != NONE {
                    f(l, c, p);
                }
            }
        }
        self.packed.fill([0; 2]);
    }

    fn pass<E: Entry>(&mut self, circles: &CompactCircles, ids: &[E]) {
        let off = usize::from(circles.cases);
        let init = (off as u64) * 0x0001_0001_0001_0001;
        let lane = |w: u64, l: u32| (w >> (16 * l)) as u16 as usize;
        let slots = &mut *self.slots;
        let people = &circles.people[..];
        let packed = &self.packed[..];
        for (i, w) in circles.start.windows(2).enumerate() {
            let mut q = circles.full[i];
            let (mut a, mut b) = (init, init);
            // From the far end: lane values are `off − cases after k`, q the
            // people up to and including k.
            for &e in ids[w[0]..w[1]].iter().rev() {
                let j = e.region();
                if !e.inside() {
                    slots[lane(a, 0)] = q;
                    slots[SLOTS + lane(a, 1)] = q;
                    slots[2 * SLOTS + lane(a, 2)] = q;
                    slots[3 * SLOTS + lane(a, 3)] = q;
                    slots[4 * SLOTS + lane(b, 0)] = q;
                    slots[5 * SLOTS + lane(b, 1)] = q;
                    slots[6 * SLOTS + lane(b, 2)] = q;
                    slots[7 * SLOTS + lane(b, 3)] = q;
                }
                q = q.wrapping_sub(people[j]);
                let p = packed[j];
                a = a.wrapping_sub(p[0]);
                b = b.wrapping_sub(p[1]);
            }
            // Slot `e + c` holds the nearest window with c cases; fold into
            // the minimum per count and clear the slots used.
            let w1 = off + 1;
            for (l, (s, mp)) in slots
                .chunks_exact_mut(SLOTS)
                .zip(self.min_pop.chunks_exact_mut(w1))
                .enumerate()
            {
                let e = lane(if l < 4 { a } else { b }, (l % 4) as u32);
                for (m, &v) in mp[1..w1 - e].iter_mut().zip(&s[e + 1..w1]) {
                    *m = (*m).min(v);
                }
                s[e..w1].fill(NONE);
            }
        }
    }
}

/// Makes lane `l` of the threshold table: entry `n` the fewest cases `c`
/// (from 1) for which `raised(c, n)` and `llr(c, n) > t`, or `min(n, C) +
/// 1` if none; non-decreasing in `n`, so one sweep with a pointer on `c`
/// makes it. A count below the entry at `n` was found not above `t` at
/// some `n'' ≤ n` (or is 0), so a window with that count and at least `n`
/// people has an LLR at most `t` plus twice the rounding error.
fn threshold(
    thr: &mut [[u64; 2]],
    l: usize,
    t: f64,
    cases: u32,
    llr: &impl Fn(u32, u32) -> f64,
    raised: &impl Fn(u32, u32) -> bool,
) {
    let (w, sh) = (l / 4, 16 * (l % 4) as u32);
    let keep = !(0xFFFFu64 << sh);
    let mut c = 1u32;
    for (n, e) in thr.iter_mut().enumerate() {
        let n = n as u32;
        if n > 0 {
            let top = n.min(cases);
            while c <= top && !(raised(c, n) && (t < 0.0 || llr(c, n) > t)) {
                c += 1;
            }
        }
        e[w] = (e[w] & keep) | (u64::from(c) << sh);
    }
}

/// Scores the windows ending in one block whose count reaches the
/// threshold, from the counts `a`, `b` and people `q` before it, into the
/// lanes' maxima `m`; returns the windows scored.
fn windows<E: Entry>(
    ids: &[E],
    people: &[u32],
    packed: &[[u64; 2]],
    thr: &[[u64; 2]],
    (mut a, mut b, mut q): (u64, u64, u32),
    m: &mut [f64; LANES],
    llr: &impl Fn(u32, u32) -> f64,
) -> u64 {
    let mut scored = 0;
    for &e in ids {
        let j = e.region();
        q += people[j];
        let p = packed[j];
        a = a.wrapping_add(p[0]);
        b = b.wrapping_add(p[1]);
        if e.inside() {
            continue;
        }
        let t = thr[q as usize];
        for (word, x, off) in [
            (((a | HIGH) - t[0]) & HIGH, a, 0),
            (((b | HIGH) - t[1]) & HIGH, b, 4),
        ] {
            let mut bits = word;
            while bits != 0 {
                let lane = (bits.trailing_zeros() >> 4) as usize;
                let v = llr((x >> (16 * lane)) as u16 as u32, q);
                scored += 1;
                if v > m[off + lane] {
                    m[off + lane] = v;
                }
                bits &= bits - 1;
            }
        }
    }
    scored
}
