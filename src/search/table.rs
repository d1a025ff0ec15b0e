//! The candidates of one kind of part, laid out for the search: the stock's pieces, every
//! realisation the `combine` setting allows (single pieces, series and parallel pairs), and
//! the sorted runs the walks read.
//!
//! A realisation is a small `Copy` record ([`Real`]) holding what the search and the stage's
//! equations need — value, tolerance extremes, voltage rating, slot points, the pieces by
//! index — so that ~300 000 realisations (two-piece E96 over 10 Ω–10 MΩ) fit in a few tens of
//! megabytes and a [`Part`] is built only for the builds the exact analysis judges. The set
//! of realisations and their figures are exactly those of [`Stock::candidates`], which the
//! brute force uses, computed by the same functions (`build::combine`, `Part::pair`'s rule
//! for the extremes, `analysis::pieces_points`).

use crate::analysis;
use crate::build::{self, Arrangement, LineKey, Part, Piece, SlotValue};
use crate::circuit::Coord;
use crate::spec::Spec;
use crate::stock::Stock;
use crate::vocab::Combine;
use crate::vocab::PartKind;
use std::cell::OnceCell;
use std::collections::HashMap;

/// No second piece.
pub const NONE: u32 = u32::MAX;

/// One realisation of a slot: one piece, or two in series or in parallel. Kept small (the
/// upper end of its tolerance and its voltage rating are worked out from its pieces when a
/// node needs them, `Table::slot_value`), since there can be a few hundred thousand.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Real {
    /// Nominal value, Ω or F.
    pub value: f64,
    /// The low end of its tolerance (`Part::min`).
    pub min: f64,
    /// `analysis::slot_points` of the realisation.
    pub pts: f64,
    /// Pieces by index into [`Table::pieces`]; `a ≤ b` (value order), `b == NONE` for one.
    pub a: u32,
    /// Second piece by index, [`NONE`] for a single piece.
    pub b: u32,
    /// How the pieces are connected.
    pub arr: Arrangement,
}

impl Real {
    /// The realisation's value at this coordinate (nominal, or the low end of its tolerance).
    pub fn coord(&self, coord: Coord) -> f64 {
        match coord {
            Coord::Value => self.value,
            Coord::Low => self.min,
        }
    }

    /// The pieces, one or two.
    pub fn pieces(&self) -> impl Iterator<Item = u32> {
        let b = (self.b != NONE).then_some(self.b);
        std::iter::once(self.a).chain(b)
    }

    /// Distinct stock lines among the pieces.
    pub fn own_lines(&self) -> usize {
        if self.b == NONE || self.b == self.a {
            1
        } else {
            2
        }
    }
}

/// A run source: candidates sorted by a coordinate, with the least key at or beyond each
/// position in each direction, so that a walk from any start reads a lower bound that only
/// grows.
#[derive(Debug, Default)]
pub struct Sorted {
    /// Realisation (or piece) indices, ascending by `coord`.
    pub ids: Vec<u32>,
    /// Each position's coordinate, ascending.
    pub coord: Vec<f64>,
    /// `up[i]` = least key of positions ≥ i; `down[i]` = least key of positions ≤ i.
    pub up: Vec<f64>,
    /// See `up`.
    pub down: Vec<f64>,
}

/// A stable radix sort of 64-bit words by their upper 32 bits, 11 bits at a time (three
/// passes), skipping the digits every word shares.
fn radix_sort_high(words: Vec<u64>) -> Vec<u64> {
    const DIGIT: u32 = 11;
    const MASK: usize = (1 << DIGIT) - 1;
    if words.len() < 512 {
        let mut words = words;
        words.sort_by_key(|w| w >> 32);
        return words;
    }
    let mut src = words;
    let mut dst = vec![0u64; src.len()];
    for pass in 0..3 {
        let shift = 32 + pass * DIGIT;
        let mut count = [0usize; 1 << DIGIT];
        for w in &src {
            count[(w >> shift) as usize & MASK] += 1;
        }
        if count.contains(&src.len()) {
            continue;
        }
        let mut at = 0;
        for c in count.iter_mut() {
            let n = *c;
            *c = at;
            at += n;
        }
        for &w in &src {
            let d = (w >> shift) as usize & MASK;
            dst[count[d]] = w;
            count[d] += 1;
        }
        std::mem::swap(&mut src, &mut dst);
    }
    src
}

/// The bits of a non-negative float, which order as the numbers do (IEEE 754).
fn order_bits(x: f64) -> u64 {
    debug_assert!(x >= 0.0);
    x.to_bits()
}

/// A realisation's code: its arrangement and its pieces, packed so that codes order as the
/// realisations are made (single pieces, then series pairs, then parallel pairs, each by
/// first piece then second).
fn code(arr: Arrangement, a: u32, b: u32) -> u64 {
    arr_bits(arr) << 62 | (a as u64) << 31 | (b as u64 & 0x7fff_ffff)
}

fn decode(code: u64) -> (Arrangement, u32, u32) {
    let arr = arr_of_bits(code >> 62);
    let b = (code & 0x7fff_ffff) as u32;
    let a = (code >> 31 & 0x7fff_ffff) as u32;
    (arr, a, if arr == Arrangement::Single { NONE } else { b })
}

fn code_of(r: &Real) -> u64 {
    code(r.arr, r.a, r.b)
}

/// The second piece of a single piece in a small code.
const SMALL_NONE: u32 = 0x7fff;

/// A code in 32 bits for a table of fewer than 32 767 pieces, ordered as the full code.
fn small_code(code: u64) -> u32 {
    let (arr, a, b) = decode(code);
    let b = if b == NONE { SMALL_NONE } else { b };
    (arr_bits(arr) as u32) << 30 | a << 15 | b
}

fn from_small(small: u32) -> u64 {
    let b = small & SMALL_NONE;
    code(
        arr_of_bits(u64::from(small >> 30)),
        small >> 15 & SMALL_NONE,
        if b == SMALL_NONE { NONE } else { b },
    )
}

/// The arrangement's two bits in a code: single, series, parallel in the order made.
fn arr_bits(arr: Arrangement) -> u64 {
    match arr {
        Arrangement::Single => 0,
        Arrangement::Series => 1,
        Arrangement::Parallel => 2,
    }
}

fn arr_of_bits(bits: u64) -> Arrangement {
    match bits {
        0 => Arrangement::Single,
        1 => Arrangement::Series,
        _ => Arrangement::Parallel,
    }
}

/// The pair arrangements a `combine` setting allows.
fn arrangements(combine: Combine) -> &'static [Arrangement] {
    match combine {
        Combine::Single => &[],
        Combine::Series => &[Arrangement::Series],
        Combine::Parallel => &[Arrangement::Parallel],
        Combine::Both => &[Arrangement::Series, Arrangement::Parallel],
    }
}

impl Sorted {
    /// The ids given (ascending), sorted by `coord` (positive values), ties by id, with the
    /// least `key` from each position on in each direction.
    fn new(ids: Vec<u32>, coord: &[f64], key: &[f64]) -> Sorted {
        // Sort the ids packed with the top 32 bits of their coordinate (sign, exponent and 20
        // bits of mantissa: an order-preserving, coarser key) in 8-byte words, the stable radix
        // sort leaving ids in id order among equal keys; then one insertion pass orders the
        // few runs of coordinates that agree to 1 part in 10⁶ by their exact value (and id).
        let packed: Vec<u64> = ids
            .iter()
            .map(|&i| (order_bits(coord[i as usize]) >> 32) << 32 | i as u64)
            .collect();
        let mut order: Vec<u32> = radix_sort_high(packed)
            .into_iter()
            .map(|w| w as u32)
            .collect();
        let mut coords: Vec<f64> = order.iter().map(|&i| coord[i as usize]).collect();
        for i in 1..order.len() {
            let mut j = i;
            while j > 0
                && (coords[j] < coords[j - 1]
                    || (coords[j] == coords[j - 1] && order[j] < order[j - 1]))
            {
                order.swap(j, j - 1);
                coords.swap(j, j - 1);
                j -= 1;
            }
        }
        let keys: Vec<f64> = order.iter().map(|&i| key[i as usize]).collect();
        Sorted::with_minima(order, coords, &keys)
    }

    /// A run of `ids` already in order, with `coord` and `key` by position.
    fn with_minima(ids: Vec<u32>, coord: Vec<f64>, key: &[f64]) -> Sorted {
        let n = ids.len();
        let mut up = vec![0.0; n];
        let mut down = vec![0.0; n];
        let mut m = f64::INFINITY;
        for i in (0..n).rev() {
            m = m.min(key[i]);
            up[i] = m;
        }
        m = f64::INFINITY;
        for i in 0..n {
            m = m.min(key[i]);
            down[i] = m;
        }
        Sorted {
            ids,
            coord,
            up,
            down,
        }
    }

    /// Number of candidates.
    pub fn len(&self) -> usize {
        self.ids.len()
    }

    /// True when there are no candidates.
    pub fn is_empty(&self) -> bool {
        self.ids.is_empty()
    }

    /// First position whose coordinate is ≥ `target`.
    pub fn start(&self, target: f64) -> usize {
        self.coord.partition_point(|&c| c < target)
    }

    /// [`Sorted::start`], searched outward from `hint` by doubling steps, then by bisection
    /// within the last step: a few reads when the target is near the last one's (the screen of
    /// a pair's second slot asks it for first slots met one after another in value order).
    pub fn start_near(&self, target: f64, hint: usize) -> usize {
        let c = &self.coord;
        let n = c.len();
        let h = hint.min(n);
        let below = |x: &f64| *x < target;
        if h < n && c[h] < target {
            // The answer is in (h, n]; c[lo - 1] < target throughout.
            let (mut lo, mut step) = (h + 1, 1);
            loop {
                let probe = lo + step - 1;
                if probe >= n {
                    return lo + c[lo..n].partition_point(below);
                }
                if c[probe] >= target {
                    return lo + c[lo..probe].partition_point(below);
                }
                lo = probe + 1;
                step *= 2;
            }
        } else {
            // The answer is in [0, hi]; every position from hi on is ≥ target.
            let (mut hi, mut step) = (h, 1);
            loop {
                if hi < step {
                    return c[..hi].partition_point(below);
                }
                let probe = hi - step;
                if c[probe] < target {
                    return probe + 1 + c[probe + 1..hi].partition_point(below);
                }
                hi = probe;
                step *= 2;
            }
        }
    }
}

/// Split ids 0..n into buckets of nearly equal key, so that each bucket's walk reads a bound
/// close to the true key: at most `MAX_BUCKETS` buckets, each at most `width` wide, the width
/// doubling from 0.01 points (or from the keys' span / 1024 when they span less) until they
/// fit; each bucket sorted by coordinate.
fn bucketed(coord: &[f64], key: &[f64]) -> Vec<Sorted> {
    let (count, bucket) = buckets_of(key);
    let mut parts: Vec<Vec<u32>> = count.iter().map(|&c| Vec::with_capacity(c)).collect();
    for (i, &b) in bucket.iter().enumerate() {
        parts[b as usize].push(i as u32);
    }
    parts
        .into_iter()
        .map(|ids| Sorted::new(ids, coord, key))
        .collect()
}

/// The buckets of [`bucketed`]: how many keys fall in each, and the bucket of each key.
fn buckets_of(key: &[f64]) -> (Vec<usize>, Vec<u8>) {
    const MAX_BUCKETS: usize = 24;
    if key.is_empty() {
        return (Vec::new(), Vec::new());
    }
    // The distinct keys; a stock usually has few (series resistors: single, twin, pair), so
    // a short sorted list grown by bisection, and a sort only when there are many.
    let mut keys: Vec<f64> = Vec::new();
    let mut last = f64::NAN;
    for &k in key {
        if k.to_bits() == last.to_bits() {
            continue;
        }
        last = k;
        match keys.binary_search_by(|x| x.total_cmp(&k)) {
            Ok(_) => {}
            Err(at) if keys.len() < 1024 => keys.insert(at, k),
            Err(_) => {
                keys = key.to_vec();
                keys.sort_unstable_by(f64::total_cmp);
                keys.dedup();
                break;
            }
        }
    }
    // 0.01 points is fine against the default weights; keys that all lie within it (goals
    // weighted only at the tie-break scale, 10⁻⁶ of the defaults) start from a width to their
    // own span, or every candidate would share one bucket and the walk would read its keys
    // as the least of them.
    let span = keys[keys.len() - 1] - keys[0];
    let mut width = if span < 0.01 && span > 0.0 {
        span / 1024.0
    } else {
        0.01
    };
    let starts = loop {
        let mut starts = vec![keys[0]];
        for &k in &keys {
            if k > starts[starts.len() - 1] + width {
                starts.push(k);
            }
        }
        if starts.len() <= MAX_BUCKETS {
            break starts;
        }
        width *= 2.0;
    };
    // Runs of equal keys are long (realisations are made piece by piece): reuse the last
    // bucket while the key repeats.
    let mut last = (f64::NAN.to_bits(), 0u8);
    let bucket: Vec<u8> = key
        .iter()
        .map(|&k| {
            if k.to_bits() != last.0 {
                last = (k.to_bits(), (starts.partition_point(|&s| s <= k) - 1) as u8);
            }
            last.1
        })
        .collect();
    let mut count = vec![0usize; starts.len()];
    for &b in &bucket {
        count[b as usize] += 1;
    }
    (count, bucket)
}

/// The value of the pair of pieces `a` (with its quantity on hand) and `b` in `arr`, when
/// `Stock::candidates` has that pair: its value inside the range (with the same tolerance),
/// and two pieces on hand when both come from one line (`same`).
fn pair_value(
    kind: PartKind,
    arr: Arrangement,
    (a, qty): (&Piece, Option<u32>),
    b: &Piece,
    same: bool,
    (lo, hi): (f64, f64),
) -> Option<f64> {
    if same && qty.is_some_and(|q| q < 2) {
        return None;
    }
    let value = build::combine(kind, arr, a.value, b.value);
    (value >= lo * (1.0 - 1e-9) && value <= hi * (1.0 + 1e-9)).then_some(value)
}

/// Realisations per kind the walk search takes at most. Two-piece realisations grow as the
/// square of the lines (a 3 000-line inventory with `combine = "both"` makes ~9 million),
/// and a table costs about 100 bytes per realisation while it is built: this keeps a search
/// under ~100 MB. Two-piece E96 over 10 Ω–10 MΩ makes 330 268.
pub const MAX_REALISATIONS: usize = 1_000_000;

/// Whether the stock makes more than `limit` realisations of `kind` (more than [`Table::new`]
/// would hold), found without building them: `Some(n)` with a count `n > limit` reached so
/// far (counting stops there), `None` when the whole count is at most `limit`.
pub fn more_realisations_than(stock: &Stock, kind: PartKind, limit: usize) -> Option<usize> {
    let pieces = stock.pieces(kind);
    let n = pieces.len();
    let arrangements = arrangements(stock.combine);
    // Every pair at most: when even that is within the limit, no need to look at values.
    if n + arrangements.len() * n * (n + 1) / 2 <= limit {
        return None;
    }
    let qty: Vec<Option<u32>> = pieces
        .iter()
        .map(|p| stock.quantity(LineKey::of(kind, p)))
        .collect();
    let range = stock.range(kind);
    let mut count = n;
    if count > limit {
        return Some(count);
    }
    for &arr in arrangements {
        for i in 0..n {
            for j in i..n {
                let a = (&pieces[i], qty[i]);
                if pair_value(kind, arr, a, &pieces[j], i == j, range).is_some() {
                    count += 1;
                }
            }
            if count > limit {
                return Some(count);
            }
        }
    }
    None
}

/// One stock piece with what the search reads of it.
#[derive(Debug, Clone)]
pub struct PieceRow {
    /// The piece.
    pub piece: Piece,
    /// Slot points of this piece alone, without its cost when some piece of the kind has no
    /// known cost (a pair with such a piece counts no cost, so this stays a lower bound).
    pub pts_lb: f64,
    /// The stock line it comes from.
    pub line: LineKey,
    /// Pieces on hand; `None` unlimited.
    pub qty: Option<u32>,
}

/// The candidates of one kind.
pub struct Table {
    /// The kind of part.
    pub kind: PartKind,
    /// The stock's pieces of this kind within the range, ascending by value.
    pub pieces: Vec<PieceRow>,
    /// Every realisation the `combine` setting allows.
    pub reals: Vec<Real>,
    /// Piece index by line, to find the pieces of lines a build already uses.
    pub by_line: HashMap<LineKey, u32>,
    /// Arrangements pairs may take.
    pub arrangements: &'static [Arrangement],
    /// The slot range, with the tolerance `Stock::candidates` applies.
    range: (f64, f64),
    /// Least slot points of any realisation.
    pub min_pts: f64,
    /// Line cost per line (`objective::line_weight`).
    lambda: f64,
    /// Fresh runs: realisations bucketed by slot points plus their own lines, per coordinate.
    fresh: [OnceCell<Vec<Sorted>>; 2],
    /// Partner runs: pieces bucketed by `pts_lb`, per coordinate.
    partners: [OnceCell<Vec<Sorted>>; 2],
    /// All realisations sorted by coordinate with suffix/prefix minima of slot points, for
    /// look-ahead bounds.
    merged: [OnceCell<Sorted>; 2],
}

fn coord_index(c: Coord) -> usize {
    match c {
        Coord::Value => 0,
        Coord::Low => 1,
    }
}

impl Table {
    /// The table of `kind` from `stock`: exactly the realisations of
    /// `Stock::candidates(kind)`.
    pub fn new(spec: &Spec, stock: &Stock, kind: PartKind) -> Table {
        let pieces: Vec<Piece> = stock.pieces(kind);
        let all_costed = pieces.iter().all(|p| p.unit_cost.is_some());
        let rows: Vec<PieceRow> = pieces
            .into_iter()
            .map(|piece| {
                let line = LineKey::of(kind, &piece);
                let mut lb = piece.clone();
                if !all_costed {
                    lb.unit_cost = None;
                }
                PieceRow {
                    pts_lb: analysis::pieces_points(spec, kind, &lb, None, false),
                    qty: stock.quantity(line),
                    line,
                    piece,
                }
            })
            .collect();
        let arrangements = arrangements(stock.combine);
        let mut table = Table {
            kind,
            by_line: rows
                .iter()
                .enumerate()
                .map(|(i, r)| (r.line, i as u32))
                .collect(),
            pieces: rows,
            reals: Vec::new(),
            arrangements,
            range: stock.range(kind),
            min_pts: f64::INFINITY,
            lambda: crate::objective::line_weight(spec),
            fresh: Default::default(),
            partners: Default::default(),
            merged: Default::default(),
        };
        let n = table.pieces.len();
        // First each realisation's code (which pieces, how), value and fresh-run key, in the
        // order they are made; then `lay_out` sorts them and builds the records. Every pair
        // at most is reserved, so the lists are never moved while they grow.
        let cap = n + arrangements.len() * n * (n + 1) / 2;
        let mut codes = Vec::with_capacity(cap);
        let mut values = Vec::with_capacity(cap);
        let mut keys = Vec::with_capacity(cap);
        let lambda = table.lambda;
        let mut push = |r: Real, code: u64| {
            codes.push(code);
            values.push(r.value);
            keys.push(r.pts + lambda * r.own_lines() as f64);
        };
        for i in 0..n as u32 {
            push(table.single(spec, i), code(Arrangement::Single, i, NONE));
        }
        for &arr in arrangements {
            for i in 0..n as u32 {
                for j in i..n as u32 {
                    if let Some(r) = table.pair(spec, arr, i, j) {
                        push(r, code(arr, i, j));
                    }
                }
            }
        }
        table.lay_out(spec, codes, values, keys);
        table
    }

    /// The realisation a code names (it was checked to exist when the code was made).
    fn real_of(&self, spec: &Spec, code: u64) -> Real {
        let (arr, i, j) = decode(code);
        match arr {
            Arrangement::Single => self.single(spec, i),
            _ => self
                .pair(spec, arr, i, j)
                .expect("a code is made only for a realisation that exists"),
        }
    }

    /// Build the realisation records in the order of the fresh runs by value (run after run,
    /// each by value, ties in the order the realisations were made), and those runs. A walk
    /// reads a run in sequence from where it starts, so it then reads memory in sequence too;
    /// records in the order they were made would cost a cache miss per candidate read, most
    /// of a walk's time on a two-piece E96 table of tens of megabytes. The records are made
    /// here from their codes (the pieces are few and in cache) rather than gathered from a
    /// list in the made order, which would cost the same misses once per record. Every other
    /// run indexes this order.
    fn lay_out(&mut self, spec: &Spec, codes: Vec<u64>, values: Vec<f64>, keys: Vec<f64>) {
        // Each bucket's realisations as 8-byte words for the radix sort: the top 32 bits of
        // the value (an order-preserving, coarser key), and the code itself in the low 32
        // bits when it fits (up to 32 766 pieces), else the index of the code in the bucket's
        // list. With the code in the word, the sorted words name their records directly and
        // nothing is gathered out of order.
        let compact = self.pieces.len() < SMALL_NONE as usize;
        let (count, bucket) = buckets_of(&keys);
        let mut local: Vec<(Vec<u64>, Vec<u64>)> = count
            .iter()
            .map(|&c| (Vec::with_capacity(c), Vec::new()))
            .collect();
        for (k, &b) in bucket.iter().enumerate() {
            let (words, full) = &mut local[b as usize];
            let low = if compact {
                small_code(codes[k]) as u64
            } else {
                full.push(codes[k]);
                (full.len() - 1) as u64
            };
            words.push((order_bits(values[k]) >> 32) << 32 | low);
        }
        drop((codes, values, keys, bucket));
        let mut reals: Vec<Real> = Vec::with_capacity(count.iter().sum());
        let mut runs = Vec::with_capacity(local.len());
        for (words, full) in local {
            let start = reals.len();
            for w in radix_sort_high(words) {
                let code = if compact {
                    from_small(w as u32)
                } else {
                    full[w as u32 as usize]
                };
                reals.push(self.real_of(spec, code));
            }
            // Ties of the coarse key by exact value, then by code (the made order).
            let run = &mut reals[start..];
            for i in 1..run.len() {
                let mut j = i;
                while j > 0 && {
                    let (a, b) = (&run[j], &run[j - 1]);
                    a.value < b.value || (a.value == b.value && code_of(a) < code_of(b))
                } {
                    run.swap(j, j - 1);
                    j -= 1;
                }
            }
            let ids: Vec<u32> = (start as u32..(start + run.len()) as u32).collect();
            let coord: Vec<f64> = run.iter().map(|r| r.value).collect();
            let key: Vec<f64> = run
                .iter()
                .map(|r| r.pts + self.lambda * r.own_lines() as f64)
                .collect();
            runs.push(Sorted::with_minima(ids, coord, &key));
        }
        self.min_pts = reals.iter().map(|r| r.pts).fold(f64::INFINITY, f64::min);
        self.reals = reals;
        // A new table's cell is empty.
        let _ = self.fresh[coord_index(Coord::Value)].set(runs);
    }

    fn single(&self, spec: &Spec, i: u32) -> Real {
        let p = &self.pieces[i as usize].piece;
        Real {
            value: p.value,
            min: p.min(),
            pts: analysis::pieces_points(spec, self.kind, p, None, false),
            a: i,
            b: NONE,
            arr: Arrangement::Single,
        }
    }

    /// The pair of pieces `i ≤ j` (value order) in `arr`, when `Stock::candidates` has it:
    /// its value inside the range, and two pieces on hand when both come from one line.
    pub fn pair(&self, spec: &Spec, arr: Arrangement, i: u32, j: u32) -> Option<Real> {
        let (i, j) = (i.min(j), i.max(j));
        let (pa, pb) = (&self.pieces[i as usize], &self.pieces[j as usize]);
        let (a, b) = (&pa.piece, &pb.piece);
        let value = pair_value(self.kind, arr, (a, pa.qty), b, i == j, self.range)?;
        Some(Real {
            value,
            min: build::combine(self.kind, arr, a.min(), b.min()),
            pts: analysis::pieces_points(spec, self.kind, a, Some(b), false),
            a: i,
            b: j,
            arr,
        })
    }

    /// True when the pair (`i`, `j`) has a value above the range even with piece `j` at the
    /// given coordinate (its value, or its low end): then so has every partner of `i` whose
    /// coordinate is larger.
    pub fn pair_above_range(&self, arr: Arrangement, i: u32, j: u32, coord: Coord) -> bool {
        let a = self.pieces[i as usize].piece.value;
        let b = self.piece_coord(j, coord);
        build::combine(self.kind, arr, a, b) > self.range.1 * (1.0 + 1e-9)
    }

    /// True when the pair (`i`, `j`) has a value below the range; then so has every partner of
    /// `i` of smaller value.
    pub fn pair_below_range(&self, arr: Arrangement, i: u32, j: u32) -> bool {
        let a = self.pieces[i as usize].piece.value;
        let b = self.pieces[j as usize].piece.value;
        build::combine(self.kind, arr, a, b) < self.range.0 * (1.0 - 1e-9)
    }

    /// The same stock with single pieces only (a seed for the search).
    pub fn singles(&self, spec: &Spec) -> Table {
        let reals: Vec<Real> = self.reals.iter().filter(|r| r.b == NONE).copied().collect();
        let mut table = Table {
            kind: self.kind,
            pieces: self.pieces.clone(),
            min_pts: f64::INFINITY,
            reals: Vec::new(),
            by_line: self.by_line.clone(),
            arrangements: &[],
            range: self.range,
            lambda: self.lambda,
            fresh: Default::default(),
            partners: Default::default(),
            merged: Default::default(),
        };
        let codes = reals.iter().map(code_of).collect();
        let values = reals.iter().map(|r| r.value).collect();
        let keys = reals
            .iter()
            .map(|r| r.pts + table.lambda * r.own_lines() as f64)
            .collect();
        table.lay_out(spec, codes, values, keys);
        table
    }

    /// What the stage's equations see of a realisation: the same figures `Part::slot_value`
    /// gives for its part (the same functions compute them).
    pub fn slot_value(&self, r: &Real) -> SlotValue {
        let a = &self.pieces[r.a as usize].piece;
        let capacitor = self.kind == PartKind::Capacitor;
        let (max, rating) = if r.b == NONE {
            (a.max(), a.voltage)
        } else {
            let b = &self.pieces[r.b as usize].piece;
            (
                build::combine(self.kind, r.arr, a.max(), b.max()),
                // Only a capacitor's rating is read (and this is asked at every node).
                if capacitor {
                    build::voltage_rating(self.kind, r.arr, a, Some(b))
                } else {
                    None
                },
            )
        };
        SlotValue {
            value: r.value,
            min: r.min,
            max,
            rating: if capacitor { rating } else { None },
        }
    }

    /// The single-piece realisation of piece `i`.
    pub fn single_of(&self, spec: &Spec, i: u32) -> Real {
        self.single(spec, i)
    }

    /// The [`Part`] of a realisation, as `Stock::candidates` builds it.
    pub fn part(&self, r: &Real) -> Part {
        let a = self.pieces[r.a as usize].piece.clone();
        if r.b == NONE {
            Part::single(self.kind, a)
        } else {
            Part::pair(self.kind, r.arr, a, self.pieces[r.b as usize].piece.clone())
        }
    }

    /// Points per stock line (`objective::line_weight`), added for each new line a build uses.
    pub fn line_cost(&self) -> f64 {
        self.lambda
    }

    /// The coordinate of a piece.
    pub fn piece_coord(&self, i: u32, coord: Coord) -> f64 {
        let p = &self.pieces[i as usize].piece;
        match coord {
            Coord::Value => p.value,
            Coord::Low => p.min(),
        }
    }

    /// Fresh runs: every realisation, keyed by its slot points plus a line per distinct
    /// piece (what it costs when none of its lines is in the build yet).
    pub fn fresh(&self, coord: Coord) -> &[Sorted] {
        self.fresh[coord_index(coord)].get_or_init(|| {
            let coords: Vec<f64> = self.reals.iter().map(|r| r.coord(coord)).collect();
            let keys: Vec<f64> = self
                .reals
                .iter()
                .map(|r| r.pts + self.lambda * r.own_lines() as f64)
                .collect();
            bucketed(&coords, &keys)
        })
    }

    /// Partner runs: pieces keyed by `pts_lb`.
    pub fn partners(&self, coord: Coord) -> &[Sorted] {
        self.partners[coord_index(coord)].get_or_init(|| {
            let coords: Vec<f64> = (0..self.pieces.len() as u32)
                .map(|i| self.piece_coord(i, coord))
                .collect();
            let keys: Vec<f64> = self.pieces.iter().map(|p| p.pts_lb).collect();
            bucketed(&coords, &keys)
        })
    }

    /// Every realisation by coordinate, keyed by slot points (no lines).
    pub fn merged(&self, coord: Coord) -> &Sorted {
        self.merged[coord_index(coord)].get_or_init(|| {
            let coords: Vec<f64> = self.reals.iter().map(|r| r.coord(coord)).collect();
            let keys: Vec<f64> = self.reals.iter().map(|r| r.pts).collect();
            Sorted::new((0..self.reals.len() as u32).collect(), &coords, &keys)
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::series::Series;
    use crate::stock::Source;

    fn spec(combine: &str) -> Spec {
        Spec::from_toml(&format!(
            "[stage]\nkind = \"inverting\"\nsupply = 9\ngain = -10\nload = 10000\nband = [20, 20000]\n[stock]\nresistor_range = [\"1k\", \"100k\"]\ncombine = \"{combine}\"\n"
        ))
        .unwrap()
    }

    fn stock(spec: &Spec) -> Stock {
        Stock::new(
            Source::Series {
                series: Series::E12,
                tolerance: 0.01,
            },
            Source::Series {
                series: Series::E6,
                tolerance: 0.2,
            },
            spec.stock.limits(),
        )
    }

    #[test]
    fn same_realisations_as_the_stock() {
        // The table must hold exactly what the brute force enumerates (Stock::candidates),
        // with the same figures to the bit, and as many as `more_realisations_than` counts.
        for combine in ["single", "series", "parallel", "both"] {
            let spec = spec(combine);
            let stock = stock(&spec);
            for kind in [PartKind::Resistor, PartKind::Capacitor] {
                let table = Table::new(&spec, &stock, kind);
                let mut ours: Vec<Part> = table.reals.iter().map(|r| table.part(r)).collect();
                let mut theirs = stock.candidates(kind);
                let key = |p: &Part| {
                    (
                        p.value.to_bits(),
                        p.arrangement as u8,
                        p.pieces[0].value.to_bits(),
                    )
                };
                ours.sort_by_key(key);
                theirs.sort_by_key(key);
                assert_eq!(ours, theirs, "{combine} {kind:?}");
                for r in &table.reals {
                    let part = table.part(r);
                    assert_eq!(r.pts, analysis::slot_points(&spec, &part));
                    assert_eq!(table.slot_value(r), part.slot_value());
                }
                // The count without a table is exact: more than n − 1, not more than n.
                let n = table.reals.len();
                assert_eq!(more_realisations_than(&stock, kind, n), None);
                let over = more_realisations_than(&stock, kind, n - 1);
                assert!(
                    over.is_some_and(|c| c > n - 1),
                    "{combine} {kind:?}: {over:?}"
                );
            }
        }
    }

    #[test]
    fn start_near_agrees_with_bisection() {
        // Every target (on, between and beyond the values, with ties) from every hint.
        let coord = vec![1.0, 2.0, 2.0, 2.0, 3.5, 4.0, 7.0, 7.0, 9.0, 10.0, 12.0];
        let s = Sorted {
            ids: (0..coord.len() as u32).collect(),
            up: vec![0.0; coord.len()],
            down: vec![0.0; coord.len()],
            coord,
        };
        for t in 0..30 {
            let target = t as f64 * 0.5;
            for hint in 0..=s.len() + 2 {
                assert_eq!(
                    s.start_near(target, hint),
                    s.start(target),
                    "target {target}, hint {hint}"
                );
            }
        }
        let empty = Sorted::default();
        assert_eq!(empty.start_near(1.0, 3), 0);
    }

    #[test]
    fn runs_bound_their_keys() {
        let spec = spec("both");
        let stock = stock(&spec);
        let table = Table::new(&spec, &stock, PartKind::Capacitor);
        for coord in [Coord::Value, Coord::Low] {
            let fresh = table.fresh(coord);
            let total: usize = fresh.iter().map(Sorted::len).sum();
            assert_eq!(total, table.reals.len());
            for s in fresh {
                assert!(s.coord.windows(2).all(|w| w[0] <= w[1]));
                for i in 0..s.len() {
                    let r = &table.reals[s.ids[i] as usize];
                    let key = r.pts + crate::objective::line_weight(&spec) * r.own_lines() as f64;
                    assert!(s.up[i] <= key && s.down[i] <= key);
                    assert!(i == 0 || s.down[i] <= s.down[i - 1]);
                    assert!(i == 0 || s.up[i] >= s.up[i - 1]);
                }
            }
        }
    }
}
