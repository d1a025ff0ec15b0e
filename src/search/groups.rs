//! The candidate tuples of one search group, in nondecreasing order of a lower bound: a sorted
//! full product for small groups, or a lazy best-first walk for a two-slot group with a
//! [`PairPlan`] (each outer part starts at the inner value it wants and walks outward, a heap
//! merging all walks), so that a ratio pair over ~10^5 realisations per slot costs
//! O(N log N) instead of N².

use crate::analysis;
use crate::build::Part;
use crate::spec::Spec;
use crate::stage::{PairPlan, Stage};
use std::cmp::Ordering;
use std::collections::BinaryHeap;

/// At most this many slots in one group (tuples are fixed-size arrays).
pub const MAX_GROUP_SLOTS: usize = 4;

pub type Tuple = [u32; MAX_GROUP_SLOTS];

/// Candidate tuples of a group, each with a lower bound of its share of the objective
/// (slot points plus the stage's context-free share), nondecreasing.
pub enum GroupList<'a> {
    Sorted(Vec<(f64, Tuple)>),
    Lazy(Box<PairWalk<'a>>),
}

impl<'a> GroupList<'a> {
    /// The `t`-th tuple, generating as needed; `None` past the end.
    pub fn get(&mut self, t: usize) -> Option<(f64, Tuple)> {
        match self {
            GroupList::Sorted(v) => v.get(t).copied(),
            GroupList::Lazy(w) => w.get(t),
        }
    }
}

/// Sorted full product of the group's slots, filtered by `group_base`.
pub fn product(
    spec: &Spec,
    stage: &dyn Stage,
    g: usize,
    slots: &[usize],
    cands: &[&[Part]],
) -> Vec<(f64, Tuple)> {
    let n = stage.slots().len();
    let sizes: Vec<usize> = slots.iter().map(|&s| cands[s].len()).collect();
    let mut tuples = Vec::new();
    let mut idx: Tuple = [0; MAX_GROUP_SLOTS];
    let mut parts: Vec<Option<&Part>> = vec![None; n];
    if sizes.contains(&0) {
        return tuples;
    }
    'product: loop {
        let mut own = 0.0;
        for (k, &s) in slots.iter().enumerate() {
            let part = &cands[s][idx[k] as usize];
            own += analysis::slot_points(spec, part);
            parts[s] = Some(part);
        }
        if let Some(base) = stage.group_base(spec, g, &parts) {
            tuples.push((base + own, idx));
        }
        for k in 0..slots.len() {
            idx[k] += 1;
            if (idx[k] as usize) < sizes[k] {
                continue 'product;
            }
            idx[k] = 0;
        }
        break;
    }
    tuples.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
    tuples
}

/// Inner candidates that share slot points, ascending by value.
struct Class {
    points: f64,
    members: Vec<u32>,
    values: Vec<f64>,
}

#[derive(Debug, Clone, Copy)]
struct Entry {
    key: f64,
    outer: u32,
    class: u32,
    pos: u32,
    up: bool,
}

impl PartialEq for Entry {
    fn eq(&self, other: &Self) -> bool {
        self.cmp(other) == Ordering::Equal
    }
}
impl Eq for Entry {}
impl PartialOrd for Entry {
    fn partial_cmp(&self, other: &Self) -> Option<Ordering> {
        Some(self.cmp(other))
    }
}
impl Ord for Entry {
    /// Reversed, so that `BinaryHeap` pops the smallest key; ties broken deterministically.
    fn cmp(&self, other: &Self) -> Ordering {
        other
            .key
            .total_cmp(&self.key)
            .then(other.outer.cmp(&self.outer))
            .then(other.class.cmp(&self.class))
            .then(other.pos.cmp(&self.pos))
            .then(other.up.cmp(&self.up))
    }
}

/// Best-first walk over a two-slot group.
pub struct PairWalk<'a> {
    spec: &'a Spec,
    stage: &'a dyn Stage,
    g: usize,
    plan: PairPlan<'a>,
    outer: &'a [Part],
    inner: &'a [Part],
    outer_points: Vec<f64>,
    classes: Vec<Class>,
    heap: BinaryHeap<Entry>,
    items: Vec<(f64, Tuple)>,
    parts: Vec<Option<&'a Part>>,
}

impl<'a> PairWalk<'a> {
    pub fn new(
        spec: &'a Spec,
        stage: &'a dyn Stage,
        g: usize,
        plan: PairPlan<'a>,
        cands: &[&'a [Part]],
        outer_extra: Vec<f64>,
    ) -> PairWalk<'a> {
        let outer = cands[plan.outer];
        let inner = cands[plan.inner];
        // Each outer part's own points plus any constant lower bound the caller adds for it.
        let outer_points: Vec<f64> = outer
            .iter()
            .enumerate()
            .map(|(i, p)| {
                analysis::slot_points(spec, p) + outer_extra.get(i).copied().unwrap_or(0.0)
            })
            .collect();
        // Group the inner candidates by their slot points (exact bits): within a class the
        // key depends on the value alone, so each walk outward is monotone.
        let mut classes: Vec<Class> = Vec::new();
        for (i, part) in inner.iter().enumerate() {
            let pts = analysis::slot_points(spec, part);
            let c = match classes
                .iter()
                .position(|c| c.points.to_bits() == pts.to_bits())
            {
                Some(c) => c,
                None => {
                    classes.push(Class {
                        points: pts,
                        members: Vec::new(),
                        values: Vec::new(),
                    });
                    classes.len() - 1
                }
            };
            classes[c].members.push(i as u32);
            classes[c].values.push(part.value);
        }
        for c in &mut classes {
            // The stock hands candidates sorted by value; keep the walk correct regardless.
            let mut order: Vec<usize> = (0..c.members.len()).collect();
            order.sort_by(|&a, &b| c.values[a].total_cmp(&c.values[b]));
            c.members = order.iter().map(|&k| c.members[k]).collect();
            c.values = order.iter().map(|&k| c.values[k]).collect();
        }
        let mut walk = PairWalk {
            spec,
            stage,
            g,
            plan,
            outer,
            inner,
            outer_points,
            classes,
            heap: BinaryHeap::new(),
            items: Vec::new(),
            parts: vec![None; stage.slots().len()],
        };
        let mut start = Vec::new();
        for (o, part) in walk.outer.iter().enumerate() {
            let Some(target) = (walk.plan.target)(part) else {
                continue;
            };
            for (c, class) in walk.classes.iter().enumerate() {
                let p = class.values.partition_point(|&v| v < target);
                if p < class.values.len() {
                    start.extend(walk.entry(o, c, p, true));
                }
                if p > 0 {
                    start.extend(walk.entry(o, c, p - 1, false));
                }
            }
        }
        walk.heap = BinaryHeap::from(start);
        walk
    }

    fn entry(&self, outer: usize, class: usize, pos: usize, up: bool) -> Option<Entry> {
        let c = &self.classes[class];
        let bound = (self.plan.bound)(&self.outer[outer], c.values[pos])?;
        Some(Entry {
            key: self.outer_points[outer] + c.points + bound,
            outer: outer as u32,
            class: class as u32,
            pos: pos as u32,
            up,
        })
    }

    fn get(&mut self, t: usize) -> Option<(f64, Tuple)> {
        while self.items.len() <= t {
            let e = self.heap.pop()?;
            let (o, c, pos) = (e.outer as usize, e.class as usize, e.pos as usize);
            // Next step outward on the same side.
            let next = if e.up {
                (pos + 1 < self.classes[c].values.len()).then(|| pos + 1)
            } else {
                pos.checked_sub(1)
            };
            if let Some(n) = next {
                if let Some(entry) = self.entry(o, c, n, e.up) {
                    self.heap.push(entry);
                }
            }
            let i = self.classes[c].members[pos];
            self.parts[self.plan.outer] = Some(&self.outer[o]);
            self.parts[self.plan.inner] = Some(&self.inner[i as usize]);
            if self
                .stage
                .group_base(self.spec, self.g, &self.parts)
                .is_some()
            {
                let mut tuple: Tuple = [0; MAX_GROUP_SLOTS];
                let slots = self.stage.groups()[self.g];
                for (k, &s) in slots.iter().enumerate() {
                    tuple[k] = if s == self.plan.outer { o as u32 } else { i };
                }
                self.items.push((e.key, tuple));
            }
        }
        self.items.get(t).copied()
    }
}
