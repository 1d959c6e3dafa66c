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

    pub fn new(people: &[f64], cases: u64) -> CompactCircles {
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
        }
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
        ids + self.start.len() * std::mem::size_of::<usize>()
            + (self.full.len() + self.people.len()) * 4
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
        self.start.push(n);
        self.full.push(self.last as u32);
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
