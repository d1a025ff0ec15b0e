//! The lazy walk over one slot's candidates: outward from the stage's target value in both
//! directions, in nondecreasing order of a lower bound of what each candidate adds to the
//! score (its slot points, the stock lines it adds to the build, and the stage's bound).
//!
//! The candidates come from three kinds of run, merged by a heap that holds one entry per
//! run, never one per candidate, so that starting a walk costs a bisection per run whatever
//! the stock's size (O(R log N)), and each candidate read costs O(log R):
//!
//! - *fresh*: the kind's realisations in buckets of nearly equal slot points plus their own
//!   lines; a candidate that uses a line already in the build is skipped here and read from
//!   the next two;
//! - *partner*: for each line already in the build, the pairs made of that line's piece and
//!   one new piece, walked over the partner pieces (a pair's value is monotone in each piece);
//! - *explicit*: the few realisations made of lines already in the build only (a single
//!   piece, or a pair of two such pieces), each with its exact key.
//!
//! Along a run the key is (least slot points at or beyond the position) + (lines it adds) +
//! bound(coordinate), which only grows because each part only grows (`table::Sorted`, the
//! stage's `WalkPlan` contract); so the first key at or over the cut-off ends the whole walk.

use super::table::{Real, Table, NONE};
use crate::build::Arrangement;
use crate::circuit::{Coord, WalkPlan};
use crate::spec::Spec;
use smallvec::SmallVec;
use std::cmp::Ordering;

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Run {
    Fresh { bucket: u16 },
    Partner { used: u8, arr: u8, bucket: u16 },
    Explicit { item: u16 },
}

#[derive(Debug, Clone, Copy)]
struct Head {
    key: f64,
    run: Run,
    pos: u32,
    up: bool,
}

impl PartialEq for Head {
    fn eq(&self, other: &Self) -> bool {
        self.cmp(other) == Ordering::Equal
    }
}
impl Eq for Head {}
impl PartialOrd for Head {
    fn partial_cmp(&self, other: &Self) -> Option<Ordering> {
        Some(self.cmp(other))
    }
}
impl Ord for Head {
    /// By key, ties broken deterministically.
    fn cmp(&self, other: &Self) -> Ordering {
        self.key
            .total_cmp(&other.key)
            .then_with(|| run_order(&self.run).cmp(&run_order(&other.run)))
            .then(self.pos.cmp(&other.pos))
            .then(self.up.cmp(&other.up))
    }
}

/// A binary min-heap kept inline for the few runs a walk usually has (a walk is started at
/// every node of the search, so it should not allocate).
#[derive(Default)]
struct MinHeap {
    items: SmallVec<[Head; 16]>,
}

impl MinHeap {
    fn peek(&self) -> Option<&Head> {
        self.items.first()
    }

    fn is_empty(&self) -> bool {
        self.items.is_empty()
    }

    fn push(&mut self, h: Head) {
        self.items.push(h);
        let mut i = self.items.len() - 1;
        while i > 0 {
            let parent = (i - 1) / 2;
            if self.items[i] < self.items[parent] {
                self.items.swap(i, parent);
                i = parent;
            } else {
                break;
            }
        }
    }

    fn pop(&mut self) -> Option<Head> {
        let last = self.items.pop()?;
        if self.items.is_empty() {
            return Some(last);
        }
        let top = std::mem::replace(&mut self.items[0], last);
        let n = self.items.len();
        let mut i = 0;
        loop {
            let (l, r) = (2 * i + 1, 2 * i + 2);
            let mut m = i;
            if l < n && self.items[l] < self.items[m] {
                m = l;
            }
            if r < n && self.items[r] < self.items[m] {
                m = r;
            }
            if m == i {
                break;
            }
            self.items.swap(i, m);
            i = m;
        }
        Some(top)
    }
}

fn run_order(r: &Run) -> (u8, u32) {
    match *r {
        Run::Explicit { item } => (0, item as u32),
        Run::Partner { used, arr, bucket } => {
            (1, (used as u32) << 20 | (arr as u32) << 16 | bucket as u32)
        }
        Run::Fresh { bucket } => (2, bucket as u32),
    }
}

/// One candidate read from a walk.
#[derive(Debug, Clone, Copy)]
pub struct Item {
    /// Lower bound of slot points + new lines + stage bound, nondecreasing along the walk.
    pub key: f64,
    /// The realisation.
    pub real: Real,
    /// Which side of the target it was met on (for reading the stage bound of this one item).
    pub up: bool,
}

/// A run not started yet, with the least key it can have (its least slot points and lines;
/// the stage bound is at least 0).
#[derive(Debug, Clone, Copy)]
enum Pending {
    Fresh { bucket: u16 },
    Partner { used: u8, arr: u8, bucket: u16 },
    Explicit,
}

/// A lazy walk over one slot's candidates.
pub struct Walk<'t, 's> {
    spec: &'s Spec,
    table: &'t Table,
    coord: Coord,
    plan: WalkPlan<'s>,
    /// Pieces of this kind whose lines the build already uses, in a fixed order.
    used: SmallVec<[u32; 16]>,
    explicit: SmallVec<[(f64, Real, bool); 8]>,
    heap: MinHeap,
    /// Runs still to start, largest least key first (the next to start is last). A run is
    /// started (its start found by bisection) only once the walk reaches its least key, so a
    /// walk that is cut after a few candidates costs a few bisections, not one per run.
    pending: SmallVec<[(f64, Pending); 16]>,
    /// Some run was left out at the start for its least key (see [`Walk::new`]).
    dropped: bool,
}

impl<'t, 's> Walk<'t, 's> {
    /// A walk of `table`'s candidates by `plan`, with `used` the pieces whose lines the
    /// build already has. Runs whose least key is at `limit` or above are left out: a walk's
    /// limit only falls.
    pub fn new(
        spec: &'s Spec,
        table: &'t Table,
        plan: WalkPlan<'s>,
        used: &[u32],
        limit: f64,
    ) -> Self {
        let coord = plan.coord;
        let lambda = table.line_cost();
        let mut pending: SmallVec<[(f64, Pending); 16]> = SmallVec::new();
        let mut dropped = false;
        for (b, run) in table.fresh(coord).iter().enumerate() {
            if run.is_empty() {
                continue;
            }
            if run.up[0] < limit {
                pending.push((run.up[0], Pending::Fresh { bucket: b as u16 }));
            } else {
                dropped = true;
            }
        }
        for (u, &piece) in used.iter().enumerate() {
            let pu = table.pieces[piece as usize].pts_lb;
            for ai in 0..table.arrangements.len() {
                for (b, run) in table.partners(coord).iter().enumerate() {
                    if run.is_empty() {
                        continue;
                    }
                    if pu + run.up[0] + lambda >= limit {
                        dropped = true;
                        continue;
                    }
                    {
                        pending.push((
                            pu + run.up[0] + lambda,
                            Pending::Partner {
                                used: u as u8,
                                arr: ai as u8,
                                bucket: b as u16,
                            },
                        ));
                    }
                }
            }
        }
        if let Some(least) = used
            .iter()
            .map(|&p| table.pieces[p as usize].pts_lb)
            .reduce(f64::min)
        {
            if least < limit {
                pending.push((least, Pending::Explicit));
            } else {
                dropped = true;
            }
        }
        // Largest first, so the next to start is last; a handful of entries.
        for i in 1..pending.len() {
            let mut j = i;
            while j > 0 && pending[j].0 > pending[j - 1].0 {
                pending.swap(j, j - 1);
                j -= 1;
            }
        }
        Walk {
            spec,
            table,
            coord,
            plan,
            used: SmallVec::from_slice(used),
            explicit: SmallVec::new(),
            heap: MinHeap::default(),
            pending,
            dropped,
        }
    }

    /// Start a pending run: find where the target falls in it and push its heads.
    fn start(&mut self, run: Pending) {
        let target = self.plan.target;
        let table = self.table;
        match run {
            Pending::Fresh { bucket } => {
                let s = &table.fresh(self.coord)[bucket as usize];
                let p = s.start(target);
                let id = Run::Fresh { bucket };
                self.push_start(id, p, s.len());
            }
            Pending::Partner { used, arr, bucket } => {
                let s = &table.partners(self.coord)[bucket as usize];
                let cu = table.piece_coord(self.used[used as usize], self.coord);
                let a = table.arrangements[arr as usize];
                let kind = table.kind;
                let p = s
                    .coord
                    .partition_point(|&c| crate::build::combine(kind, a, cu, c) < target);
                let id = Run::Partner { used, arr, bucket };
                self.push_start(id, p, s.len());
            }
            Pending::Explicit => {
                // Made of used lines only: a single piece, or a pair of two used pieces. The
                // stage's bound is read from the coordinate first, so that a realisation it
                // rules out is never built.
                let kind = table.kind;
                for x in 0..self.used.len() {
                    let i = self.used[x];
                    let ci = table.piece_coord(i, self.coord);
                    self.offer_explicit(ci, |t| Some(t.single_of(self.spec, i)));
                    for y in x..self.used.len() {
                        let j = self.used[y];
                        let cj = table.piece_coord(j, self.coord);
                        for &arr in table.arrangements {
                            let c = crate::build::combine(kind, arr, ci, cj);
                            self.offer_explicit(c, |t| t.pair(self.spec, arr, i, j));
                        }
                    }
                }
            }
        }
    }

    /// Push one explicit candidate at coordinate `c`, built by `make` only when the stage's
    /// bound lets it through.
    fn offer_explicit(&mut self, c: f64, make: impl FnOnce(&Table) -> Option<Real>) {
        if c < self.plan.window.0 || c > self.plan.window.1 {
            return;
        }
        let up = c >= self.plan.target;
        let Some(bound) = (self.plan.bound)(c, up) else {
            return;
        };
        let Some(real) = make(self.table) else {
            return;
        };
        let item = self.explicit.len() as u16;
        let key = real.pts + bound;
        self.explicit.push((key, real, up));
        self.heap.push(Head {
            key,
            run: Run::Explicit { item },
            pos: 0,
            up,
        });
    }

    fn push_start(&mut self, id: Run, p: usize, len: usize) {
        if p < len {
            if let Some(h) = self.head(id, p, true) {
                self.heap.push(h);
            }
        }
        if p > 0 {
            if let Some(h) = self.head(id, p - 1, false) {
                self.heap.push(h);
            }
        }
    }

    /// The head of a run at `pos`, `None` when the stage bound ends the run there.
    fn head(&self, run: Run, pos: usize, up: bool) -> Option<Head> {
        let lambda = self.table.line_cost();
        let (pts, c) = match run {
            Run::Fresh { bucket } => {
                let s = &self.table.fresh(self.coord)[bucket as usize];
                (if up { s.up[pos] } else { s.down[pos] }, s.coord[pos])
            }
            Run::Partner { used, arr, bucket } => {
                let s = &self.table.partners(self.coord)[bucket as usize];
                let u = self.used[used as usize];
                let arr = self.table.arrangements[arr as usize];
                let cu = self.table.piece_coord(u, self.coord);
                let pu = self.table.pieces[u as usize].pts_lb;
                let least = if up { s.up[pos] } else { s.down[pos] };
                (
                    pu + least + lambda,
                    crate::build::combine(self.table.kind, arr, cu, s.coord[pos]),
                )
            }
            Run::Explicit { .. } => unreachable!("explicit items are pushed once"),
        };
        // Past the window on the walk's side, this and every farther value fail.
        if (up && c > self.plan.window.1) || (!up && c < self.plan.window.0) {
            return None;
        }
        let bound = (self.plan.bound)(c, up)?;
        Some(Head {
            key: pts + bound,
            run,
            pos: pos as u32,
            up,
        })
    }

    fn is_used(&self, piece: u32) -> bool {
        self.used.contains(&piece)
    }

    /// The next candidate whose key is below `limit`, in nondecreasing key; `None` when the
    /// next key would reach `limit` (every later one does too) or every run has ended.
    pub fn next_below(&mut self, limit: f64) -> Option<Item> {
        let table = self.table;
        loop {
            let top = self.heap.peek().map_or(f64::INFINITY, |h| h.key);
            if let Some(&(least, run)) = self.pending.last() {
                if least <= top {
                    if least >= limit {
                        return None;
                    }
                    self.pending.pop();
                    self.start(run);
                    continue;
                }
            }
            if top >= limit {
                return None;
            }
            let h = self.heap.pop()?;
            let real = match h.run {
                Run::Explicit { item } => {
                    let (key, real, up) = self.explicit[item as usize];
                    return Some(Item { key, real, up });
                }
                Run::Fresh { bucket } => {
                    let s = &table.fresh(self.coord)[bucket as usize];
                    self.advance(h, s.len());
                    let real = table.reals[s.ids[h.pos as usize] as usize];
                    if real.pieces().any(|p| self.is_used(p)) {
                        continue;
                    }
                    real
                }
                Run::Partner { used, arr, bucket } => {
                    let s = &table.partners(self.coord)[bucket as usize];
                    let m = s.ids[h.pos as usize];
                    let u = self.used[used as usize];
                    let arr: Arrangement = table.arrangements[arr as usize];
                    // A pair past the top of the range going up ends the run: every farther
                    // partner has a larger coordinate, so (being at least its low end, and
                    // the pair monotone in each piece) a larger value too. Going down the
                    // same holds for the bottom when the coordinate is the value itself.
                    let past = match (h.up, self.coord) {
                        (true, _) => table.pair_above_range(arr, u, m, self.coord),
                        (false, Coord::Value) => table.pair_below_range(arr, u, m),
                        (false, Coord::Low) => false,
                    };
                    if !past {
                        self.advance(h, s.len());
                    }
                    if self.is_used(m) {
                        continue;
                    }
                    match table.pair(self.spec, arr, u, m) {
                        Some(r) => r,
                        None => continue,
                    }
                }
            };
            debug_assert!(real.b == NONE || real.a <= real.b);
            return Some(Item {
                key: h.key,
                real,
                up: h.up,
            });
        }
    }

    /// Push the run's next position after `h`.
    fn advance(&mut self, h: Head, len: usize) {
        let next = if h.up {
            (h.pos as usize + 1 < len).then_some(h.pos as usize + 1)
        } else {
            (h.pos as usize).checked_sub(1)
        };
        if let Some(n) = next {
            if let Some(head) = self.head(h.run, n, h.up) {
                self.heap.push(head);
            }
        }
    }

    /// The stage's bound for one item (its exact coordinate, its side).
    pub fn bound_of(&self, item: &Item) -> Option<f64> {
        (self.plan.bound)(item.real.coord(self.coord), item.up)
    }

    /// A lower bound of the first key a walk of `table` by `plan` would yield, without
    /// building it — each fresh run's key where the walk would start it, each partner run's
    /// least points, each explicit candidate's points and bound — or −∞ as soon as one key
    /// below `limit` is found (then only "something may follow" matters, and −∞ says so
    /// whatever rounding the caller's own sum takes). The search asks it of the next slot
    /// before walking it, to drop a part that nothing can follow for the price of a few
    /// bisections.
    ///
    /// `hints` keeps, per fresh run, where the last such call found its start; successive
    /// calls for nearby targets then read a few positions instead of bisecting the run.
    pub fn floor(
        table: &Table,
        plan: &WalkPlan,
        used: &[u32],
        limit: f64,
        hints: &mut Vec<usize>,
    ) -> f64 {
        let coord = plan.coord;
        let target = plan.target;
        let lambda = table.line_cost();
        // Only whether some key falls below `limit` matters: stop at the first that does, and
        // read no bound where the points alone reach it (they are then the bound returned,
        // which stays a lower bound).
        let mut floor = f64::INFINITY;
        let (lo, hi) = plan.window;
        let read = |pts: f64, at: f64, up: bool, floor: &mut f64| {
            if pts >= limit {
                *floor = floor.min(pts);
            } else if at < lo || at > hi {
                // Fails a requirement: no key.
            } else if let Some(b) = (plan.bound)(at, up) {
                *floor = floor.min(pts + b);
            }
        };
        let runs = table.fresh(coord);
        hints.resize(runs.len(), 0);
        for (run, hint) in runs.iter().zip(hints.iter_mut()) {
            if run.is_empty() {
                continue;
            }
            if run.up[0] >= limit {
                floor = floor.min(run.up[0]);
                continue;
            }
            let p = run.start_near(target, *hint);
            *hint = p;
            if p < run.len() {
                read(run.up[p], run.coord[p], true, &mut floor);
            }
            if p > 0 {
                read(run.down[p - 1], run.coord[p - 1], false, &mut floor);
            }
            if floor < limit {
                return f64::NEG_INFINITY;
            }
        }
        if !table.arrangements.is_empty() {
            let least = table
                .partners(coord)
                .iter()
                .filter_map(|r| r.up.first().copied())
                .fold(f64::INFINITY, f64::min);
            for &u in used {
                floor = floor.min(table.pieces[u as usize].pts_lb + least + lambda);
            }
            if floor < limit {
                return f64::NEG_INFINITY;
            }
        }
        let kind = table.kind;
        for (x, &i) in used.iter().enumerate() {
            let (ci, pi) = (table.piece_coord(i, coord), table.pieces[i as usize].pts_lb);
            read(pi, ci, ci >= target, &mut floor);
            for &j in &used[x..] {
                let (cj, pj) = (table.piece_coord(j, coord), table.pieces[j as usize].pts_lb);
                for &arr in table.arrangements {
                    let c = crate::build::combine(kind, arr, ci, cj);
                    read(pi + pj, c, c >= target, &mut floor);
                }
            }
            if floor < limit {
                return f64::NEG_INFINITY;
            }
        }
        floor
    }

    /// True when every run has ended (none was left out at the start).
    pub fn exhausted(&self) -> bool {
        self.heap.is_empty() && self.pending.is_empty() && !self.dropped
    }
}
