// Over 600 lines: one job, the standard-value search (enumeration, the exact solve of the last resistor, ranking, the sliced job); about 200 lines are its tests.
//! Best standard-value combinations: which E-series resistor values reach the target thresholds
//! most closely, for any topology (everything goes through [`Circuit`]).
//!
//! # Objective
//! For a combination with thresholds VT+ and VT−, the relative errors are
//! e+ = (VT+ − VT+target)/s+ and e− = (VT− − VT−target)/s−, with s = |target| (or, for a target
//! of exactly 0 V, the target hysteresis width |VT+target − VT−target|, or 1 V if that is zero too).
//! The search minimises the worst of the two, **f = max(|e+|, |e−|)**, so neither threshold is
//! traded away for the other; absolute errors in volts are reported beside it. Near-ties (within a
//! relative 1e-12) go to the combination closest to the starting design, Σ|ln(Ri/Ri,start)|.
//!
//! # Method, and why it is exact
//! The resistors are the parameters of kind [`ParameterKind::Resistor`]. Every resistor but the
//! last is enumerated over the series values from [`SearchSettings::r_min_ohm`] to `r_max_ohm`; the
//! last (the *solved* resistor) is found for each combination of the others:
//!
//! 1. **The thresholds are bilinear in one resistor** (bilinear theorem of network functions —
//!    H. W. Bode, *Network Analysis and Feedback Amplifier Design*, 1945, from memory — applied to
//!    the switching condition, derived here): in a linear network each node voltage is α·Vin + β with α, β
//!    ratios of cofactors of the nodal matrix; a conductance G enters that matrix as a rank-one
//!    stamp, so every cofactor is affine in G. The device switches where a fixed linear combination
//!    of node voltages equals a constant (V(+) − V(−) = VOS, VX = VM…), so the threshold
//!    Vin = (a + bG)/(c + dG): a Möbius function of G and therefore of R = 1/G. Having no pole for
//!    R > 0 (the circuit is defined there), it is monotone in R.
//! 2. **The objective is then quasi-convex in the solved resistor:** |e| of a monotone e is
//!    non-increasing then non-decreasing, and the maximum of two such functions is too (its
//!    sub-level sets are intersections of intervals). So over the sorted series values f is
//!    non-increasing up to the continuous optimum x* and non-decreasing after it.
//! 3. **Continuous optimum.** Each threshold's Möbius function is fitted exactly through three
//!    points (lowest, middle and highest series value; cross-ratio form). On that model the sign
//!    of f's one-sided slope is known everywhere (from each error's sign and the model's
//!    direction), and it runs −, 0, + along x; bisection on it, with the bracket ends kept on
//!    series values, closes the bracket around the continuous optimum x* to two adjacent series
//!    values in log2 M steps. The bisection starts by galloping out from the previous
//!    combination's bracket (x* moves little from one value of the innermost resistor to the
//!    next), which finds the same bracket in fewer slope signs.
//! 4. **Series values on both sides.** From those two values the search walks outward on the
//!    real circuit, offering each value to the top-N list, and stops on a side once a value is
//!    worse than the current N-th best *and* not better than the value before it — by step 2
//!    every value further out is worse still. The stop rule uses only real evaluations, so an
//!    imprecise x* costs a few extra evaluations, never a missed combination.
//! 5. **Pruning.** When the model puts both values around x* above the current N-th best (by more
//!    than the tolerance the model is held to, 1e-9 of the thresholds), the walk is skipped: by
//!    step 2 no value of that combination can enter.
//! 6. **Probes from a model too.** Step 1 holds for every resistor, so with the outer resistors
//!    fixed and the solved one at a probe value, the thresholds are bilinear in the innermost
//!    enumerated resistor as well: nine real evaluations per run of that resistor fit the three
//!    probes as functions of it, and step 3 takes its fit points from these models. Pruned
//!    combinations then cost no circuit evaluation at all.
//!
//! **Non-bilinear topologies** (a transistor model solved numerically, say) are handled safely.
//! Any sign that a model is wrong — fit points that are not monotone, or a walked value that
//! differs from the model by more than 1e-9 of the thresholds' size — distrusts the models: that
//! combination falls back to an exhaustive scan of every series value of the solved resistor, and
//! the whole search is run again without pruning and without probe models, every combination
//! evaluated, walked and checked on the real circuit. A failed evaluation also falls back to the
//! exhaustive scan. The first combinations are always walked in full (the list is not yet full),
//! so a wrong model shows early. (A function that agrees with a bilinear one at every checked
//! value to 1e-9 yet is not quasi-convex could in principle slip through; for linear networks the
//! argument above is exact.) [`SearchReport::exhaustive_combinations`] counts the fallbacks.
//!
//! # Monotone plan (topologies solved numerically)
//! A topology whose thresholds are not bilinear in any resistor (the Ebers–Moll transistor pair)
//! states instead, through [`Circuit::monotone_structure`], a resistor R_m both thresholds are
//! monotone in (the pair's RE) and a resistor R_o that only loads the output (the pair's RC2:
//! VT− does not depend on it, VT+ does not rise as it rises, and a design without a fold at its
//! smallest value has none at a larger one). The topology checks these numerically and says so
//! in its documentation; nothing is assumed of the other resistors (the pair's switching is not
//! monotone in RC1: whether it switches at all is not an interval of RC1 or RE). Then every
//! combination of the *other* resistors (a row) is handled as follows, and the result equals
//! exhaustive enumeration (`tests/tests/search_bjt_bruteforce.rs`):
//!
//! 1. **A bound over R_o from one evaluation.** At R_m's value and R_o's smallest value, VT+ is
//!    the largest VT+ of any R_o and VT− is everyone's, so with e+ and e− from that evaluation,
//!    every value of R_o has f ≥ b = max(|e−|, max(0, −e+)) (held to 1e-9 of the thresholds for
//!    rounding). Only when b is within the entry bar is R_o walked upward (each value evaluated
//!    and offered), stopping once the bound of what is left, from the last value, is out of reach;
//!    a value that does not switch is walked over, not taken as the end.
//! 2. **A walk over R_m.** b is quasi-convex in R_m (|e−| and max(0, −e+) are, each of a monotone
//!    threshold; so their maximum), so from a start value the row is walked both ways, each way
//!    stopping at a value whose b is above the entry bar and above the value before it. Values
//!    that do not switch are walked over. The start is where the previous row's b was least (rows
//!    next to each other differ in one resistor by one series step), so a row usually costs a
//!    handful of evaluations.
//!
//! Each evaluation counted is a real one and every listed combination was evaluated and offered
//! like any other, so the distinct rule, the tie-break and the current budget apply unchanged. Cost
//! on the dust-extractor demo (E6 over 1 k–1 M, five resistors): see `core/benches/search.rs`.
//!
//! With an optional current budget, a combination enters the list only if the network's quiescent
//! current, as [`analyse`] reports it, is within the budget. The walk continues past values that
//! fail the budget (a feasible value further out may still qualify), so the result stays optimal
//! among budget-feasible combinations. The budget is checked only for combinations good enough
//! to enter the list, first by two operating points (a lower bound of the analysed maximum, so a
//! failure there is final), then by the full analysis.
//!
//! # Distinct alternatives
//! Two combinations whose VT+ and VT− both agree within [`DISTINCT_REL`] (10 ppm of the
//! normalisers above) are the *same alternative*: a divider scaled as a whole, an equal ratio
//! from the series, or a resistor the thresholds do not depend on. With
//! [`SearchSettings::distinct`] (the default) the list keeps only the best of each such group (by
//! objective, then the tie-break), so the N entries are N different threshold pairs. The rule
//! only removes entries, so an entry bar taken from the list remains a valid bound and the
//! pruning argument below is unchanged.
//!
//! # In slices
//! [`SearchJob`] holds the whole state (odometer, pass, list), so the search can run a bounded
//! number of evaluations at a time ([`SearchJob::step`]) with its [`Workload`] bound known before
//! the first step; [`search`] is the same job run in one call.
//!
//! # Split over workers
//! The enumerated resistors are an odometer, digit 0 (the innermost resistor) turning fastest, so
//! the combinations are numbered 0 … M^(n−1) − 1 in enumeration order; [`SearchJob::parts`] cuts
//! that sequence into consecutive ranges (whole runs of the innermost resistor when there are
//! enough of them), and [`SearchJob::restrict`] makes a job that enumerates one range only
//! (starting its odometer at the range's first combination, fitting the probe models there, and
//! restarting an unpruned pass there). Each part runs the same method with its own top-N list;
//! [`SearchJob::merge`] offers the parts' lists, in range order and each best first, to one list by
//! the same rules (the current budget was checked in the part).
//!
//! **Exact only without the distinct rule.** Without it the list is the `top_n` best by objective
//! then tie-break, whatever order the combinations come in: a part's list starts empty, so its
//! entry bar is never below the one-call search's at the same combination and it prunes and stops
//! its walks no earlier; every combination of the one-call list is among the best `top_n` of its
//! part and is offered again at the merge. With the distinct rule (the default) the list depends
//! on the order near twins meet: two alternatives of one part can both be twins of a better one
//! from another part (A~B, B~C, not A~C), which the whole run folds differently from the part.
//! This happens: E96 over 1k–1M for the three-resistor inverting form in four parts lost a
//! 5.62k/5.62k/14.7k set to its 56.2k twin. So `crate::jobs::split` splits a search only when
//! [`SearchSettings::distinct`] is off; a distinct search runs whole on one worker. Checked for 1
//! to 8 parts in `tests/tests/search_split.rs`. The work differs: a part prunes against its own
//! list, so `evaluations` (the parts' sum) is usually above the one-call count.
//!
//! Cost: M^(n−1) combinations for n resistors and M series values in range (E96 over three
//! decades, three resistors: 289² ≈ 83 500), each a few model evaluations; real circuit
//! evaluations number about 9·M^(n−2) plus the walks (about 3 000 in that example).
//! The inner loop does not allocate: one parameter buffer is reused for `with_parameters`.

use crate::analysis::{CheckSettings, OutputState, Sense, Thresholds};
use crate::error::DesignError;
use crate::eseries::ESeries;
use crate::topology::{analyse, Circuit, ParameterKind};
use serde::{Deserialize, Serialize};

/// Most combinations of the enumerated resistors a search will take on (M^(n−1)).
pub const MAX_COMBINATIONS: u64 = 2_000_000;

/// Most threshold evaluations a search may spend. Bilinear topologies need a few thousand; only
/// the unpruned pass of a non-bilinear topology with exhaustive fallbacks comes near this (E96
/// over three decades with three resistors would need 24 million), and is then refused with a
/// suggestion rather than left running.
pub const MAX_EVALUATIONS: u64 = 5_000_000;

/// Largest `top_n` honoured.
pub const MAX_TOP_N: usize = 1000;

/// What the standard-value search may choose from and how many results it returns.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct SearchSettings {
    /// The series every resistor is taken from.
    pub series: ESeries,
    /// Smallest resistor value allowed, ohms.
    pub r_min_ohm: f64,
    /// Largest resistor value allowed, ohms.
    pub r_max_ohm: f64,
    /// How many best combinations to return (1 … [`MAX_TOP_N`]).
    pub top_n: usize,
    /// Largest quiescent network current allowed, amperes (as [`analyse`] reports it); `None`: no limit.
    /// A constraint: a combination that draws more is never listed, however close it comes.
    pub current_budget_a: Option<f64>,
    /// List only distinct alternatives (see [`same_alternative`]): of combinations whose
    /// thresholds agree within [`DISTINCT_REL`], only the best one is listed.
    pub distinct: bool,
}

impl SearchSettings {
    /// Checks every value against its physical range (`crate::limits`) and the order of the range.
    pub fn validate(&self) -> Result<(), DesignError> {
        use crate::limits::{check, Quantity};
        check(Quantity::Resistance, "search.r_min_ohm", self.r_min_ohm)?;
        check(Quantity::Resistance, "search.r_max_ohm", self.r_max_ohm)?;
        if let Some(b) = self.current_budget_a {
            crate::error::positive("search.current_budget_a", b)?;
            check(Quantity::Current, "search.current_budget_a", b)?;
        }
        Ok(())
    }
}

impl Default for SearchSettings {
    /// E24 from 1 kΩ to 1 MΩ, ten distinct results, no current limit (common practice: below 1 kΩ the
    /// network loads the device output, above 1 MΩ bias currents and leakage dominate).
    fn default() -> Self {
        SearchSettings {
            series: ESeries::E24,
            r_min_ohm: 1e3,
            r_max_ohm: 1e6,
            top_n: 10,
            current_budget_a: None,
            distinct: true,
        }
    }
}

/// One resistor's value in a candidate.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PartValue {
    /// Parameter identifier (record field name).
    pub id: String,
    /// Part designator (R1, R2…).
    pub designator: Option<String>,
    /// Series value chosen, ohms.
    pub value_ohm: f64,
}

/// One combination of standard values and how close it comes.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Candidate {
    /// The resistor values, in the order of [`Circuit::parameters`].
    pub parts: Vec<PartValue>,
    /// VT+ reached, volts.
    pub vt_upper_v: f64,
    /// VT− reached, volts.
    pub vt_lower_v: f64,
    /// VT+ − target VT+, volts.
    pub error_upper_v: f64,
    /// VT− − target VT−, volts.
    pub error_lower_v: f64,
    /// Relative error of VT+ (a fraction; see the module notes for the normaliser).
    pub error_upper_rel: f64,
    /// Relative error of VT− (a fraction).
    pub error_lower_rel: f64,
    /// The objective: max(|error_upper_rel|, |error_lower_rel|).
    pub worst_error_rel: f64,
    /// Quiescent network current of this combination, amperes (`None` if its analysis failed).
    pub quiescent_current_a: Option<f64>,
}

/// The outcome of a search: the best combinations and what it took to find them.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SearchReport {
    /// The thresholds aimed at.
    pub targets: Thresholds,
    /// The best combinations, best first (fewer than `top_n` only if fewer exist).
    pub candidates: Vec<Candidate>,
    /// The series searched.
    pub series: ESeries,
    /// Number of series values in the allowed range, M.
    pub values_per_resistor: usize,
    /// Combinations of the enumerated resistors, M^(n−1).
    pub combinations: u64,
    /// Threshold evaluations spent.
    pub evaluations: u64,
    /// Identifier of the resistor solved for rather than enumerated.
    pub solved_id: String,
    /// Combinations where the solved resistor had to be scanned exhaustively (non-bilinear thresholds).
    pub exhaustive_combinations: u64,
}

/// The objective's targets and normalisers.
#[derive(Debug, Clone, Copy)]
struct Objective {
    tu: f64,
    tl: f64,
    su: f64,
    sl: f64,
}

impl Objective {
    fn new(t: Thresholds) -> Self {
        let width = (t.vt_upper_v - t.vt_lower_v).abs();
        let norm = |v: f64| {
            if v != 0.0 {
                v.abs()
            } else if width > 0.0 {
                width
            } else {
                1.0
            }
        };
        Objective { tu: t.vt_upper_v, tl: t.vt_lower_v, su: norm(t.vt_upper_v), sl: norm(t.vt_lower_v) }
    }

    fn errors(&self, yu: f64, yl: f64) -> (f64, f64) {
        ((yu - self.tu) / self.su, (yl - self.tl) / self.sl)
    }

    fn worst(&self, t: &Thresholds) -> f64 {
        let (eu, el) = self.errors(t.vt_upper_v, t.vt_lower_v);
        eu.abs().max(el.abs())
    }
}

/// A threshold as a function of the solved resistance x: constant, or (a + b·x)/(c + d·x) with
/// `dir` its direction (+1 increasing, −1 decreasing).
#[derive(Debug, Clone, Copy)]
enum Bilinear {
    Constant(f64),
    Mobius { a: f64, b: f64, c: f64, d: f64, dir: f64 },
}

impl Bilinear {
    /// The Möbius function through three points (x1 < x2 < x3), from the cross-ratio identity
    /// (y−y1)(y2−y3)/((y−y3)(y2−y1)) = (x−x1)(x2−x3)/((x−x3)(x2−x1)). `None` when the points are
    /// not monotone (then no pole-free Möbius function passes through them).
    fn fit(x: [f64; 3], y: [f64; 3]) -> Option<Self> {
        let [x1, x2, x3] = x;
        let [y1, y2, y3] = y;
        let size = y1.abs().max(y2.abs()).max(y3.abs());
        let spread = (y1 - y2).abs().max((y2 - y3).abs()).max((y1 - y3).abs());
        if spread <= 1e-10 * size {
            return Some(Bilinear::Constant(y2));
        }
        if !((y1 < y2 && y2 < y3) || (y1 > y2 && y2 > y3)) {
            return None;
        }
        let p = (y2 - y3) * (x2 - x1);
        let q = (y2 - y1) * (x2 - x3);
        Some(Bilinear::Mobius {
            a: -y1 * p * x3 + y3 * q * x1,
            b: y1 * p - y3 * q,
            c: -p * x3 + q * x1,
            d: p - q,
            dir: if y3 > y1 { 1.0 } else { -1.0 },
        })
    }

    fn eval(&self, x: f64) -> f64 {
        match *self {
            Bilinear::Constant(v) => v,
            Bilinear::Mobius { a, b, c, d, .. } => (a + b * x) / (c + d * x),
        }
    }

    /// y(x) − t as a fraction (r, q) with q > 0, so comparisons need no division.
    fn offset(&self, x: f64, t: f64) -> (f64, f64) {
        match *self {
            Bilinear::Constant(v) => (v - t, 1.0),
            Bilinear::Mobius { a, b, c, d, .. } => {
                let q = c + d * x;
                let r = a + b * x - t * q;
                if q < 0.0 {
                    (-r, -q)
                } else {
                    (r, q)
                }
            }
        }
    }

    fn dir(&self) -> f64 {
        match *self {
            Bilinear::Constant(_) => 0.0,
            Bilinear::Mobius { dir, .. } => dir,
        }
    }
}

fn sign(v: f64) -> f64 {
    if v > 0.0 {
        1.0
    } else if v < 0.0 {
        -1.0
    } else {
        0.0
    }
}

/// Sign of the slope of f = max(|e+|, |e−|) on the model at x: +1 rising (optimum to the left),
/// −1 falling (to the right), 0 at an optimum (a kink where the two cross with opposite slopes, a
/// zero of the active error, or a flat active piece).
fn model_slope(obj: &Objective, mu: &Bilinear, ml: &Bilinear, x: f64) -> f64 {
    // e = r/(q·s) with q, s > 0: sign(e) = sign(r), and |e+| > |e−| ⇔ |r+|·q−·s− > |r−|·q+·s+.
    let (ru, qu) = mu.offset(x, obj.tu);
    let (rl, ql) = ml.offset(x, obj.tl);
    let gu = sign(ru) * mu.dir();
    let gl = sign(rl) * ml.dir();
    let mag_u = ru.abs() * ql * obj.sl;
    let mag_l = rl.abs() * qu * obj.su;
    if mag_u > mag_l {
        gu
    } else if mag_l > mag_u {
        gl
    } else if gu > 0.0 && gl > 0.0 {
        1.0
    } else if gu < 0.0 && gl < 0.0 {
        -1.0
    } else {
        0.0
    }
}

/// Where the model's continuous optimum x* lies among the sorted series values: the smallest
/// index s with a rising-or-flat slope at `grid[s]` (`grid.len()` if none), so x* is in
/// [grid[s−1], grid[s]]. Bisection on the slope sign keeps that bracket; because f is quasi-convex
/// the sign runs −1 … −1, 0 …, +1 … along the sorted values, and log2 M halvings close the bracket
/// to two adjacent series values — all the discrete problem needs of x*.
///
/// `hint` (any index) is where the search starts: the previous combination's bracket, usually a
/// step or two away, found then in two or three slope signs instead of log2 M (see
/// [`partition_from`]; the same index either way).
fn model_bracket(obj: &Objective, mu: &Bilinear, ml: &Bilinear, grid: &[f64], hint: usize) -> usize {
    partition_from(grid.len(), hint, |i| model_slope(obj, mu, ml, grid[i]) >= 0.0)
}

/// The smallest index in `0..m` where `rising` holds, or `m` if none, for a `rising` that is false
/// up to some index and true from there on. Gallops from `hint` (steps 1, 2, 4, … towards the
/// change) until the change is bracketed, then halves the bracket: exactly the index a bisection of
/// the whole range gives, in about 2·log2(d + 1) calls for a change d indices from the hint
/// (exponential search; Bentley and Yao, "An almost optimal algorithm for unbounded searching",
/// 1976, from memory).
fn partition_from(m: usize, hint: usize, rising: impl Fn(usize) -> bool) -> usize {
    // The answer lies in lo..=hi.
    let (mut lo, mut hi) = (0, m);
    let h = hint.min(m);
    if h < m && !rising(h) {
        lo = h + 1;
        let mut step = 1;
        while lo < hi {
            let probe = (lo - 1).saturating_add(step).min(hi - 1);
            if rising(probe) {
                hi = probe;
                break;
            }
            lo = probe + 1;
            step = step.saturating_mul(2);
        }
    } else {
        hi = h;
        let mut step = 1;
        while lo < hi {
            let probe = hi.saturating_sub(step).max(lo);
            if !rising(probe) {
                lo = probe + 1;
                break;
            }
            hi = probe;
            step = step.saturating_mul(2);
        }
    }
    while lo < hi {
        let mid = lo + (hi - lo) / 2;
        if rising(mid) {
            hi = mid;
        } else {
            lo = mid + 1;
        }
    }
    lo
}

/// Tolerance within which two objective values count as tied.
fn tie_tol(f: f64) -> f64 {
    1e-12 * f.abs() + 1e-15
}

/// Thresholds closer than this, relative to the objective's normalisers, make two combinations the
/// same alternative: 10 ppm, a hundredth of the tightest standard tolerance (0.1 %, E192), so no
/// bench could tell them apart. Such twins are one divider scaled as a whole (10k/22k and
/// 100k/220k), a pair of equal ratio from the series (1k0/2k0 and 1k5/3k0), or values of a
/// resistor the thresholds do not depend on (a collector load).
pub const DISTINCT_REL: f64 = 1e-5;

/// Whether thresholds `a` and `b` make the same alternative: both VT+ and VT− agree within
/// [`DISTINCT_REL`] of their normalisers (see the module notes). Two listed alternatives always
/// differ by more than that in VT+ or VT−.
fn same_alternative(obj: &Objective, a: &Thresholds, b: &Thresholds) -> bool {
    (a.vt_upper_v - b.vt_upper_v).abs() <= DISTINCT_REL * obj.su
        && (a.vt_lower_v - b.vt_lower_v).abs() <= DISTINCT_REL * obj.sl
}

/// An entry of the top-N list.
#[derive(Debug, Clone)]
struct Entry {
    f: f64,
    closeness: f64,
    resistors_ohm: Vec<f64>,
    thresholds: Thresholds,
    current_a: Option<f64>,
}

fn better(f: f64, closeness: f64, than: &Entry) -> bool {
    if (f - than.f).abs() <= tie_tol(f.max(than.f)) {
        closeness < than.closeness
    } else {
        f < than.f
    }
}

/// The search's working state for one run.
struct Searcher<C: Circuit> {
    template: C,
    checks: CheckSettings,
    obj: Objective,
    budget_a: Option<f64>,
    top_n: usize,
    /// List only distinct alternatives ([`SearchSettings::distinct`]).
    distinct: bool,
    grid: Vec<f64>,
    /// Full parameter vector, reused for every evaluation.
    values: Vec<f64>,
    /// Indices of the resistor parameters in `values`; the last one is solved.
    slots: Vec<usize>,
    /// ln of the starting design's resistor values, for the tie-break.
    ln_start: Vec<f64>,
    solved: usize,
    /// Per grid index: the combination number it was last evaluated in, and the objective then
    /// (NaN for a failed evaluation). Stamps avoid clearing the cache for every combination.
    stamp: Vec<u64>,
    fcache: Vec<f64>,
    combo: u64,
    evaluations: u64,
    exhaustive: u64,
    /// Whether combinations may be skipped on the model's word (see [`Searcher::solve_combination`]).
    prune: bool,
    /// Set when a model failed a check: the thresholds are not bilinear in the solved resistor.
    model_failed: bool,
    /// Index in `values` of the innermost enumerated resistor, if any.
    inner: Option<usize>,
    /// For the current setting of the outer resistors: each probe's (VT+, VT−) as bilinear
    /// functions of the innermost enumerated resistor (see [`Searcher::fit_probe_models`]).
    probe_models: Option<[(Bilinear, Bilinear); 3]>,
    top: Vec<Entry>,
    /// The monotone plan (see the module notes): indices in `values` of the monotone resistor
    /// (also `solved`) and of the output load; `None`: the bilinear method.
    plan: Option<(usize, usize)>,
    /// Monotone plan: per grid index of the monotone resistor, this row's lower bound of the
    /// objective over every output load (`Some(None)`: no switching at the smallest load).
    row: Vec<Option<Option<f64>>>,
    /// Monotone plan: grid index where the last row's bound was least; the next row starts there.
    row_guess: usize,
    /// The last combination's bracket around x* (see [`model_bracket`]); the next one starts there.
    bracket_guess: usize,
}

/// A fresh evaluation (for the model check) or a cached objective.
enum Eval {
    Fresh(Thresholds, f64),
    Cached(f64),
    Failed,
}

impl<C: Circuit> Searcher<C> {
    /// The objective a newcomer must beat (with the tie tolerance) to enter the list.
    fn entry_bar(&self) -> f64 {
        if self.top.len() < self.top_n {
            f64::INFINITY
        } else {
            self.top.last().map_or(f64::INFINITY, |e| e.f + tie_tol(e.f))
        }
    }

    fn closeness(&self) -> f64 {
        self.closeness_of(self.slots.iter().map(|&s| self.values[s]))
    }

    /// The tie-break Σ|ln(Ri/Ri,start)| of resistor values given in `slots` order.
    fn closeness_of(&self, resistors_ohm: impl Iterator<Item = f64>) -> f64 {
        resistors_ohm.zip(&self.ln_start).map(|(v, l)| (v.ln() - l).abs()).sum()
    }

    /// Evaluates grid value `i` for the solved resistor in the current combination and offers it.
    fn eval(&mut self, i: usize) -> Eval {
        if self.stamp[i] == self.combo {
            let f = self.fcache[i];
            return if f.is_nan() { Eval::Failed } else { Eval::Cached(f) };
        }
        self.stamp[i] = self.combo;
        self.fcache[i] = f64::NAN;
        self.values[self.solved] = self.grid[i];
        self.evaluations += 1;
        let Ok(c) = self.template.with_parameters(&self.values) else { return Eval::Failed };
        let Ok(t) = c.thresholds() else { return Eval::Failed };
        if !(t.vt_upper_v.is_finite() && t.vt_lower_v.is_finite()) {
            return Eval::Failed;
        }
        let f = self.obj.worst(&t);
        self.fcache[i] = f;
        self.offer(f, t, &c);
        Eval::Fresh(t, f)
    }

    /// Puts the current combination into the top-N list if it is good enough and within budget.
    fn offer(&mut self, f: f64, t: Thresholds, c: &C) {
        if f > self.entry_bar() {
            return;
        }
        let closeness = self.closeness();
        let Some(twin) = self.place_for(f, closeness, &t, |e| self.slots.iter().zip(&e.resistors_ohm).all(|(&s, &v)| self.values[s] == v))
        else {
            return;
        };
        let mut current_a = None;
        if let Some(budget) = self.budget_a {
            if self.exceeds_at_thresholds(c, &t, budget) {
                return;
            }
            match analyse(c, &self.checks) {
                Ok(a) if a.quiescent_current_a <= budget * (1.0 + 1e-12) => current_a = Some(a.quiescent_current_a),
                _ => return,
            }
        }
        let resistors_ohm = self.slots.iter().map(|&s| self.values[s]).collect();
        self.insert(twin, Entry { f, closeness, resistors_ohm, thresholds: t, current_a });
    }

    /// The list rules before the current budget: `None` when a newcomer (objective `f`, tie-break
    /// `closeness`, thresholds `t`) cannot enter — the list is full of better ones, `same` finds it
    /// listed already (a restarted pass, or a part's list offered twice), or a listed twin is
    /// better —; else the index of the twin it replaces, if any.
    fn place_for(&self, f: f64, closeness: f64, t: &Thresholds, same: impl Fn(&Entry) -> bool) -> Option<Option<usize>> {
        let full = self.top.len() >= self.top_n;
        if full && !self.top.last().is_some_and(|last| better(f, closeness, last)) {
            return None;
        }
        if self.top.iter().any(same) {
            return None;
        }
        // The same alternative as a listed one: only the better of the two stays.
        let twin = if self.distinct {
            self.top.iter().position(|e| same_alternative(&self.obj, &e.thresholds, t))
        } else {
            None
        };
        if twin.is_some_and(|j| !better(f, closeness, &self.top[j])) {
            return None;
        }
        Some(twin)
    }

    /// Puts an admitted entry in its place (replacing its twin) and keeps the best `top_n`.
    fn insert(&mut self, twin: Option<usize>, e: Entry) {
        if let Some(j) = twin {
            self.top.remove(j);
        }
        let pos = self.top.iter().position(|x| better(e.f, e.closeness, x)).unwrap_or(self.top.len());
        self.top.insert(pos, e);
        self.top.truncate(self.top_n);
    }

    /// Offers an entry a part of a split search listed (its current budget already checked there)
    /// to this list, by the same rules as [`Self::offer`].
    fn admit(&mut self, e: Entry) {
        if e.f > self.entry_bar() {
            return;
        }
        let Some(twin) = self.place_for(e.f, e.closeness, &e.thresholds, |x| x.resistors_ohm == e.resistors_ohm) else {
            return;
        };
        self.insert(twin, e);
    }

    /// A cheap exact rejection: [`analyse`] reports the largest network current over operating
    /// points that include (VT+, input-low state) and (VT−, input-high state), so if either of
    /// those two already exceeds the budget the full analysis cannot pass.
    fn exceeds_at_thresholds(&self, c: &C, t: &Thresholds, budget: f64) -> bool {
        let (low_state, high_state) = match c.sense() {
            Sense::Inverting => (OutputState::High, OutputState::Low),
            Sense::NonInverting => (OutputState::Low, OutputState::High),
        };
        [(t.vt_upper_v, low_state), (t.vt_lower_v, high_state)].iter().any(|&(vin, state)| {
            c.operating_point(vin, state).is_ok_and(|op| op.network_current_a.abs() > budget * (1.0 + 1e-12))
        })
    }

    /// Evaluates the circuit at the current `values` and offers it; `None` when it does not switch
    /// or the evaluation fails.
    fn eval_current(&mut self) -> Option<Thresholds> {
        self.evaluations += 1;
        let c = self.template.with_parameters(&self.values).ok()?;
        let t = c.thresholds().ok()?;
        if !(t.vt_upper_v.is_finite() && t.vt_lower_v.is_finite()) {
            return None;
        }
        let f = self.obj.worst(&t);
        self.offer(f, t, &c);
        Some(t)
    }

    /// Monotone plan: a lower bound of the objective over every value of the output load, from the
    /// thresholds at its smallest value (VT− unchanged by it, VT+ only falling), and the slack it
    /// is held to (1e-9 of the thresholds, for rounding).
    fn load_bound(&self, t: &Thresholds) -> (f64, f64) {
        let (eu, el) = self.obj.errors(t.vt_upper_v, t.vt_lower_v);
        let slack = 1e-9 * (t.vt_upper_v.abs() / self.obj.su).max(t.vt_lower_v.abs() / self.obj.sl) + 1e-15;
        (el.abs().max((-eu).max(0.0)), slack)
    }

    /// Monotone plan, one point of a row: the monotone resistor at grid index `i`, the output load
    /// at its smallest value, evaluated and offered; when the bound allows a value of the load to
    /// enter the list, the load is walked upward (see the module notes). Returns the bound (`None`:
    /// no switching at the smallest load, so at none).
    fn monotone_point(&mut self, i: usize) -> Option<f64> {
        if let Some(b) = self.row[i] {
            return b;
        }
        let (monotone, load) = self.plan?;
        self.values[monotone] = self.grid[i];
        self.values[load] = self.grid[0];
        let bound = self.eval_current().map(|t| {
            let (b, slack) = self.load_bound(&t);
            if b <= self.entry_bar() + slack {
                // VT+ falls as the load rises and VT− stays: walk up until even the bound of what
                // is left is out of reach. A failed value is walked over (not taken as the end).
                for j in 1..self.grid.len() {
                    self.values[load] = self.grid[j];
                    if let Some(tj) = self.eval_current() {
                        let (bj, sj) = self.load_bound(&tj);
                        if bj > self.entry_bar() + sj {
                            break;
                        }
                    }
                }
                self.values[load] = self.grid[0];
            }
            b
        });
        self.row[i] = Some(bound);
        bound
    }

    /// Monotone plan, one row (every enumerated resistor fixed): the bound of [`Self::load_bound`]
    /// is quasi-convex in the monotone resistor (each threshold monotone in it, so |e−| and
    /// max(0, −e+) are, and so their maximum), so from a starting index the row is walked both ways
    /// and each way stops at a value whose bound is above the entry bar and above the value
    /// before it: every value further on is then worse still. Values that do not switch are
    /// walked over.
    fn monotone_row(&mut self) {
        let m = self.grid.len();
        self.row.iter_mut().for_each(|r| *r = None);
        let start = self.row_guess.min(m - 1);
        let mut best: Option<(f64, usize)> = None;
        let note = |b: f64, i: usize, best: &mut Option<(f64, usize)>| {
            if best.is_none_or(|(v, _)| b < v) {
                *best = Some((b, i));
            }
        };
        let mut prev: Option<f64> = None;
        let mut at_start = None;
        for i in start..m {
            let Some(b) = self.monotone_point(i) else { continue };
            note(b, i, &mut best);
            if i == start {
                at_start = Some(b);
            }
            let slack = 1e-9 * b.abs() + 1e-15;
            if b > self.entry_bar() + slack && prev.is_some_and(|p| b > p + slack) {
                break;
            }
            prev = Some(b);
        }
        let mut prev = at_start;
        for i in (0..start).rev() {
            let Some(b) = self.monotone_point(i) else { continue };
            note(b, i, &mut best);
            let slack = 1e-9 * b.abs() + 1e-15;
            if b > self.entry_bar() + slack && prev.is_some_and(|p| b > p + slack) {
                break;
            }
            prev = Some(b);
        }
        if let Some((_, i)) = best {
            self.row_guess = i;
        }
    }

    /// Scans every grid value of the solved resistor (the safe fallback).
    fn exhaustive(&mut self) {
        self.exhaustive += 1;
        for i in 0..self.grid.len() {
            self.eval(i);
        }
    }

    /// Finds the best values of the solved resistor for the current values of the others.
    fn solve_combination(&mut self) {
        let m = self.grid.len();
        if m < 4 {
            self.exhaustive();
            return;
        }
        let probes = [0, m / 2, m - 1];
        let mut yu = [0.0; 3];
        let mut yl = [0.0; 3];
        if let (Some(pm), Some(inner)) = (&self.probe_models, self.inner) {
            let x = self.values[inner];
            for (k, (mu, ml)) in pm.iter().enumerate() {
                yu[k] = mu.eval(x);
                yl[k] = ml.eval(x);
            }
        } else {
            for (k, &i) in probes.iter().enumerate() {
                match self.eval(i) {
                    Eval::Fresh(t, _) => {
                        yu[k] = t.vt_upper_v;
                        yl[k] = t.vt_lower_v;
                    }
                    _ => {
                        self.exhaustive();
                        return;
                    }
                }
            }
        }
        let xs = probes.map(|i| self.grid[i]);
        let (Some(mu), Some(ml)) = (Bilinear::fit(xs, yu), Bilinear::fit(xs, yl)) else {
            // Not monotone over the range: not a pole-free bilinear function.
            self.model_failed = true;
            self.exhaustive();
            return;
        };
        let tol_u = 1e-9 * yu.iter().fold(0.0_f64, |a, y| a.max(y.abs())) + 1e-15;
        let tol_l = 1e-9 * yl.iter().fold(0.0_f64, |a, y| a.max(y.abs())) + 1e-15;
        let s = model_bracket(&self.obj, &mu, &ml, &self.grid, self.bracket_guess);
        self.bracket_guess = s;
        if self.prune {
            // By quasi-convexity the best series values of this combination are grid[s − 1] and
            // grid[s]. For a bilinear circuit the model is its exact function (to rounding), so
            // if the model puts both above the entry bar, with a margin as wide as the tolerance
            // the model is held to, no value of this combination can enter: skip the walk.
            let model_f = |i: usize| {
                let x = self.grid[i];
                self.obj.worst(&Thresholds { vt_upper_v: mu.eval(x), vt_lower_v: ml.eval(x) })
            };
            let best =
                if s > 0 { model_f(s - 1) } else { f64::INFINITY }.min(if s < m { model_f(s) } else { f64::INFINITY });
            let margin = (tol_u / self.obj.su).max(tol_l / self.obj.sl);
            if best - margin > self.entry_bar() {
                return;
            }
        }

        let models = Models { mu, ml, tol_u, tol_l };
        // Walk outward from the two values around x*: rightward over s, s+1, … (the value inside
        // s is s − 1) and leftward over s − 1, s − 2, … (the value inside s − 1 is s).
        let mut inner_of_s = None;
        if s > 0 {
            match self.checked(s - 1, &models) {
                Some(f) => inner_of_s = Some(f),
                None => return self.exhaustive(),
            }
        }
        let mut inner_of_left = None;
        let mut prev = inner_of_s;
        for i in s..m {
            let Some(f) = self.checked(i, &models) else { return self.exhaustive() };
            if i == s {
                inner_of_left = Some(f);
            }
            if f > self.entry_bar() && prev.is_some_and(|p| f >= p) {
                break;
            }
            prev = Some(f);
        }
        let mut prev = inner_of_left;
        for i in (0..s).rev() {
            // s − 1 is cached from above; the stop rule is the same mirrored.
            let Some(f) = self.checked(i, &models) else { return self.exhaustive() };
            if f > self.entry_bar() && prev.is_some_and(|p| f >= p) {
                break;
            }
            prev = Some(f);
        }
    }

    /// Step 3's probes for a whole run of the innermost enumerated resistor R_e at once: with the
    /// outer resistors fixed and the solved resistor at a probe value, the thresholds are
    /// bilinear in R_e too (the same argument), so three real evaluations per probe fit them as
    /// functions of R_e, and every combination of the run takes its probe values from these
    /// models instead of three evaluations of its own. Used only in the pruning pass, whose
    /// safety net (walk checks, restart) covers these models as well.
    fn fit_probe_models(&mut self) {
        self.probe_models = None;
        let (Some(inner), m) = (self.inner, self.grid.len()) else { return };
        if m < 4 {
            return;
        }
        let saved = self.values[inner];
        let xs = [self.grid[0], self.grid[m / 2], self.grid[m - 1]];
        let mut models = [(Bilinear::Constant(0.0), Bilinear::Constant(0.0)); 3];
        for (j, &probe) in [0, m / 2, m - 1].iter().enumerate() {
            self.values[self.solved] = self.grid[probe];
            let mut yu = [0.0; 3];
            let mut yl = [0.0; 3];
            for (k, &x) in xs.iter().enumerate() {
                self.values[inner] = x;
                self.evaluations += 1;
                let t = self.template.with_parameters(&self.values).and_then(|c| c.thresholds());
                match t {
                    Ok(t) if t.vt_upper_v.is_finite() && t.vt_lower_v.is_finite() => {
                        yu[k] = t.vt_upper_v;
                        yl[k] = t.vt_lower_v;
                    }
                    // A failed evaluation: this run uses real probes.
                    _ => {
                        self.values[inner] = saved;
                        return;
                    }
                }
            }
            match (Bilinear::fit(xs, yu), Bilinear::fit(xs, yl)) {
                (Some(mu), Some(ml)) => models[j] = (mu, ml),
                _ => {
                    self.model_failed = true;
                    self.values[inner] = saved;
                    return;
                }
            }
        }
        self.values[inner] = saved;
        self.probe_models = Some(models);
    }

    /// Evaluates grid value `i` and checks a fresh result against the bilinear models; `None` when
    /// the evaluation failed or the model does not hold there.
    fn checked(&mut self, i: usize, m: &Models) -> Option<f64> {
        match self.eval(i) {
            Eval::Fresh(t, f) => {
                let x = self.grid[i];
                let ok =
                    (t.vt_upper_v - m.mu.eval(x)).abs() <= m.tol_u && (t.vt_lower_v - m.ml.eval(x)).abs() <= m.tol_l;
                if !ok {
                    self.model_failed = true;
                }
                ok.then_some(f)
            }
            Eval::Cached(f) => Some(f),
            Eval::Failed => None,
        }
    }
}

/// The two thresholds' bilinear models for one combination and the tolerances they are held to.
struct Models {
    mu: Bilinear,
    ml: Bilinear,
    tol_u: f64,
    tol_l: f64,
}

/// The work a search may take, known before it starts ([`SearchJob::workload`]).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Workload {
    /// Resistors chosen by the search, n.
    pub resistors: usize,
    /// Series values in the allowed range, M.
    pub values_per_resistor: usize,
    /// Combinations of the enumerated resistors, M^(n−1).
    pub combinations: u64,
    /// Upper bound of the threshold evaluations: a pruning pass and an unpruned pass, each at most
    /// M evaluations per combination (every series value of the solved resistor) plus 9 per run of
    /// the innermost enumerated resistor for its probe models. Bilinear topologies need a small
    /// fraction of it; [`Progress::estimated_evaluations`] refines it as the search runs.
    pub max_evaluations: u64,
}

impl Workload {
    /// Upper bound of the search's time, seconds, before it starts: [`Workload::max_evaluations`]
    /// times the cost of one evaluation (`Circuit::seconds_per_evaluation`, or a cost the caller
    /// measured). The search usually needs a small fraction of it; [`Progress::remaining_s`]
    /// refines it as it runs.
    pub fn bound_s(&self, seconds_per_evaluation: f64) -> f64 {
        self.max_evaluations as f64 * seconds_per_evaluation
    }
}

/// How far a [`SearchJob`] has come.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Progress {
    /// Combinations finished in the current pass.
    pub combinations_done: u64,
    /// Combinations in a pass.
    pub combinations: u64,
    /// Threshold evaluations spent so far (both passes).
    pub evaluations: u64,
    /// Whether the search is in its unpruned second pass (a model check failed in the first:
    /// the thresholds are not bilinear in the solved resistor, so every combination is scanned).
    pub unpruned_pass: bool,
    /// Evaluations the whole search is expected to take: those spent, plus the remaining
    /// combinations of this pass at this pass's rate so far; never above the workload's bound.
    pub estimated_evaluations: u64,
    /// Whether the search is complete ([`SearchJob::finish`] gives the report).
    pub finished: bool,
}

impl Progress {
    /// Fraction of the expected work done, 0 … 1.
    pub fn fraction(&self) -> f64 {
        if self.finished {
            1.0
        } else if self.estimated_evaluations == 0 {
            0.0
        } else {
            (self.evaluations as f64 / self.estimated_evaluations as f64).clamp(0.0, 1.0)
        }
    }

    /// Seconds still to go, extrapolated from `elapsed_s` spent on the evaluations so far
    /// (`core` has no clock: the caller measures). `None` before any evaluation.
    pub fn remaining_s(&self, elapsed_s: f64) -> Option<f64> {
        if self.finished {
            return Some(0.0);
        }
        if self.evaluations == 0 || !(elapsed_s.is_finite() && elapsed_s >= 0.0) {
            return None;
        }
        let per_eval = elapsed_s / self.evaluations as f64;
        Some(per_eval * self.estimated_evaluations.saturating_sub(self.evaluations) as f64)
    }
}

/// A standard-value search that runs in slices, for a page that must stay responsive: create it
/// (settings checked, [`SearchJob::workload`] known), call [`SearchJob::step`] with a budget of
/// evaluations until [`Progress::finished`], then [`SearchJob::finish`]. To cancel, stop calling
/// `step` and drop the job. Slicing does not change the result: a job stepped one evaluation at a
/// time ends with the same report as [`search`].
pub struct SearchJob<C: Circuit> {
    st: Searcher<C>,
    params: Vec<crate::topology::Parameter>,
    targets: Thresholds,
    settings: SearchSettings,
    /// Indices in the parameter vector of the enumerated resistors (all but the solved one).
    others: Vec<usize>,
    /// Odometer over the enumerated resistors (digit k counts down the series from the top).
    idx: Vec<usize>,
    /// The combinations this job runs, `[first, end)` in enumeration order (all, unless
    /// [`SearchJob::restrict`]ed to a part of a split search).
    first: u64,
    end: u64,
    workload: Workload,
    done_in_pass: u64,
    evaluations_at_pass_start: u64,
    finished: bool,
}

impl<C: Circuit> SearchJob<C> {
    /// Checks the settings and targets and sets up the search of the standard-value combinations of
    /// `circuit`'s resistors that come closest to `targets` (see the module notes). The circuit's
    /// other parameters (rails, device) are kept; its own resistor values only break near-ties.
    /// Targets with VT+ not above VT− are refused: no combination is offered for them.
    pub fn new(
        circuit: &C,
        targets: Thresholds,
        settings: &SearchSettings,
        checks: &CheckSettings,
    ) -> Result<Self, DesignError> {
        settings.validate()?;
        crate::limits::check(crate::limits::Quantity::Voltage, "targets.vt_upper_v", targets.vt_upper_v)?;
        crate::limits::check(crate::limits::Quantity::Voltage, "targets.vt_lower_v", targets.vt_lower_v)?;
        if targets.vt_upper_v <= targets.vt_lower_v {
            return Err(DesignError::infeasible(
                format!(
                    "VT+ ({} V) must be above VT− ({} V): a Schmitt trigger switches up at the higher threshold",
                    targets.vt_upper_v, targets.vt_lower_v
                ),
                "swap the two targets or move them apart",
            ));
        }
        if settings.r_max_ohm < settings.r_min_ohm {
            return Err(DesignError::invalid(
                "search.r_max_ohm",
                format!("must not be below r_min_ohm ({} Ω)", settings.r_min_ohm),
            ));
        }
        if settings.top_n == 0 || settings.top_n > MAX_TOP_N {
            return Err(DesignError::invalid("search.top_n", format!("must be between 1 and {MAX_TOP_N}")));
        }
        circuit.validate()?;
        let params = circuit.parameters();
        let slots: Vec<usize> =
            params.iter().enumerate().filter(|(_, p)| p.kind == ParameterKind::Resistor && !p.held_in_search).map(|(i, _)| i).collect();
        let Some(&last) = slots.last() else {
            return Err(DesignError::Parameter {
                reason: "this circuit has no resistors for the search to choose".into(),
            });
        };
        let is_resistor = |i: usize| params.get(i).is_some_and(|p| p.kind == ParameterKind::Resistor && !p.held_in_search);
        let plan = circuit
            .monotone_structure()
            .filter(|p| p.monotone != p.output_load && is_resistor(p.monotone) && is_resistor(p.output_load))
            .map(|p| (p.monotone, p.output_load));
        let solved = plan.map_or(last, |(monotone, _)| monotone);
        let grid = settings.series.values_between(settings.r_min_ohm, settings.r_max_ohm);
        if grid.is_empty() {
            return Err(DesignError::invalid(
                "search.r_max_ohm",
                format!(
                    "no {} value lies between {} Ω and {} Ω: widen the range",
                    settings.series, settings.r_min_ohm, settings.r_max_ohm
                ),
            ));
        }
        let m = grid.len();
        let others: Vec<usize> = match plan {
            Some((monotone, load)) => slots.iter().copied().filter(|&i| i != monotone && i != load).collect(),
            None => slots[..slots.len() - 1].to_vec(),
        };
        let enumerated = others.len();
        let combinations = (0..enumerated)
            .try_fold(1u64, |acc, _| acc.checked_mul(m as u64).filter(|&c| c <= MAX_COMBINATIONS));
        let Some(combinations) = combinations else {
            return Err(DesignError::infeasible(
                format!(
                    "{} resistors over {} {} values each is more than {} combinations",
                    slots.len(),
                    m,
                    settings.series,
                    MAX_COMBINATIONS
                ),
                "narrow the resistance range or choose a coarser series",
            ));
        };
        let runs = if enumerated > 0 { combinations / m as u64 } else { 0 };
        let max_evaluations = match plan {
            // Every value of the monotone resistor and of the output load, once each.
            Some(_) => combinations.saturating_mul(m as u64 * m as u64),
            None => 2 * combinations * m as u64 + 9 * runs,
        };
        let workload = Workload { resistors: slots.len(), values_per_resistor: m, combinations, max_evaluations };
        let values: Vec<f64> = params.iter().map(|p| p.value).collect();
        let ln_start = slots.iter().map(|&s| values[s].ln()).collect();
        let inner = if enumerated > 0 && plan.is_none() { Some(slots[0]) } else { None };
        let st = Searcher {
            template: circuit.clone(),
            checks: *checks,
            obj: Objective::new(targets),
            budget_a: settings.current_budget_a,
            top_n: settings.top_n,
            distinct: settings.distinct,
            stamp: vec![u64::MAX; m],
            fcache: vec![f64::NAN; m],
            grid,
            values,
            slots,
            ln_start,
            solved,
            combo: 0,
            evaluations: 0,
            exhaustive: 0,
            prune: true,
            model_failed: false,
            inner,
            probe_models: None,
            top: Vec::with_capacity(settings.top_n + 1),
            plan,
            row: vec![None; m],
            row_guess: m / 2,
            bracket_guess: m / 2,
        };
        Ok(SearchJob {
            st,
            params,
            targets,
            settings: settings.clone(),
            idx: vec![0; others.len()],
            others,
            first: 0,
            end: combinations,
            workload,
            done_in_pass: 0,
            evaluations_at_pass_start: 0,
            finished: false,
        })
    }

    /// The bound on the work, known before the first step.
    pub fn workload(&self) -> Workload {
        self.workload
    }

    /// Restricts a job not yet stepped to the combinations `[start, end)` of the enumeration (a
    /// part of a split search; see "Split over workers" in the module notes). Its report lists the
    /// best of those combinations; [`SearchJob::merge`] puts the parts' reports together.
    pub fn restrict(mut self, start: u64, end: u64) -> Result<Self, DesignError> {
        if start >= end || end > self.workload.combinations {
            return Err(DesignError::Parameter {
                reason: format!(
                    "search part {start}..{end} is not a non-empty part of 0..{}: split the search with SearchJob::parts",
                    self.workload.combinations
                ),
            });
        }
        if self.st.evaluations > 0 || self.done_in_pass > 0 {
            return Err(DesignError::Parameter { reason: "a search already under way cannot be restricted: restrict it before the first step".into() });
        }
        self.first = start;
        self.end = end;
        self.idx = self.digits(start);
        Ok(self)
    }

    /// The odometer's digits of combination number `c` (digit 0 turns fastest).
    fn digits(&self, c: u64) -> Vec<usize> {
        odometer(c, self.st.grid.len(), self.idx.len())
    }

    /// Consecutive combination ranges `[start, end)` for at most `parts` parts of a split search,
    /// in enumeration order: whole runs of the innermost enumerated resistor (M combinations each)
    /// when there are at least as many runs as parts, else equal ranges of combinations.
    pub fn parts(&self, parts: usize) -> Vec<(u64, u64)> {
        let n = self.workload.combinations;
        let m = self.st.grid.len() as u64;
        let runs = n / m.max(1);
        let (unit, count) = if runs >= parts as u64 && n.is_multiple_of(m.max(1)) { (m, runs) } else { (1, n) };
        let k = (parts.max(1) as u64).min(count.max(1));
        (0..k).map(|i| (count * i / k * unit, count * (i + 1) / k * unit)).collect()
    }

    /// Puts the reports of the parts of this (whole, unstepped) search back together, in
    /// enumeration order: each part's list offered in turn to one list by the same rules as the
    /// single run (see "Split over workers" in the module notes). The candidates equal the one-call
    /// search's; `evaluations` and `exhaustive_combinations` are the parts' sums.
    pub fn merge(mut self, parts: Vec<SearchReport>) -> Result<SearchReport, DesignError> {
        let solved_id = self.params[self.st.solved].id.clone();
        let (mut evaluations, mut exhaustive) = (0u64, 0u64);
        for part in parts {
            if part.solved_id != solved_id || part.values_per_resistor != self.st.grid.len() || part.series != self.settings.series {
                return Err(DesignError::Parameter {
                    reason: "a search part comes from another search: merge the parts of one split search".into(),
                });
            }
            evaluations += part.evaluations;
            exhaustive += part.exhaustive_combinations;
            for c in part.candidates {
                if c.parts.len() != self.st.slots.len() {
                    return Err(DesignError::Parameter {
                        reason: "a search part lists another circuit's resistors: merge the parts of one split search".into(),
                    });
                }
                let closeness = self.st.closeness_of(c.parts.iter().map(|p| p.value_ohm));
                self.st.admit(Entry {
                    f: c.worst_error_rel,
                    closeness,
                    resistors_ohm: c.parts.iter().map(|p| p.value_ohm).collect(),
                    thresholds: Thresholds { vt_upper_v: c.vt_upper_v, vt_lower_v: c.vt_lower_v },
                    current_a: c.quiescent_current_a,
                });
            }
        }
        self.st.evaluations = evaluations;
        self.st.exhaustive = exhaustive;
        Ok(self.finish())
    }

    /// Runs whole combinations until at least `max_evaluations` threshold evaluations have been
    /// spent in this call (at least one combination per call) or the search is complete. A
    /// combination costs at most M + 9 evaluations, so a call overshoots its budget by no more.
    pub fn step(&mut self, max_evaluations: u64) -> Progress {
        let start = self.st.evaluations;
        while !self.finished {
            self.one_combination();
            if self.st.evaluations.saturating_sub(start) >= max_evaluations {
                break;
            }
        }
        self.progress()
    }

    /// Runs `count` combinations of the enumerated resistors (at least one), or fewer when the
    /// search completes first; a restart into the unpruned pass counts as one of them.
    pub fn step_combinations(&mut self, count: u64) -> Progress {
        for _ in 0..count.max(1) {
            if self.finished {
                break;
            }
            self.one_combination();
        }
        self.progress()
    }

    /// Where the search stands.
    pub fn progress(&self) -> Progress {
        let spent_in_pass = self.st.evaluations - self.evaluations_at_pass_start;
        let combinations = self.end - self.first;
        let remaining = combinations - self.done_in_pass.min(combinations);
        let estimated = if self.finished {
            self.st.evaluations
        } else if self.done_in_pass == 0 {
            self.workload.max_evaluations
        } else {
            let rate = spent_in_pass as f64 / self.done_in_pass as f64;
            let rest = (rate * remaining as f64).ceil();
            self.st.evaluations.saturating_add(if rest.is_finite() { rest as u64 } else { u64::MAX })
        };
        Progress {
            combinations_done: self.done_in_pass,
            combinations,
            evaluations: self.st.evaluations,
            unpruned_pass: !self.st.prune,
            estimated_evaluations: estimated.min(self.workload.max_evaluations).max(self.st.evaluations),
            finished: self.finished,
        }
    }

    /// The best combinations found: the search's answer once [`Progress::finished`]; before that,
    /// the best of the combinations seen so far.
    pub fn finish(&self) -> SearchReport {
        report(&self.st, &self.params, self.targets, &self.settings, self.workload.combinations)
    }

    /// One combination of the enumerated resistors: its best solved values offered to the list,
    /// then the odometer moved on. Enumerates from the highest values down: in most networks the
    /// current falls as resistance rises, so a current budget is met early and the entry bar drops
    /// sooner. The order does not change the result.
    fn one_combination(&mut self) {
        let st = &mut self.st;
        let m = st.grid.len();
        for (k, &slot) in self.others.iter().enumerate() {
            st.values[slot] = st.grid[m - 1 - self.idx[k]];
        }
        if st.plan.is_some() {
            st.monotone_row();
        } else if self.idx.first() == Some(&0) || self.done_in_pass == 0 {
            // A new run of the innermost enumerated resistor (or a part starting inside one).
            if st.prune {
                st.fit_probe_models();
            } else {
                st.probe_models = None;
            }
        }
        if st.plan.is_none() {
            st.solve_combination();
        }
        st.combo += 1;
        if st.prune && st.model_failed {
            // A model failed a check: the thresholds are not bilinear in the solved resistor, so
            // everything is redone without pruning (the list found so far is kept: it holds real
            // evaluations only).
            st.prune = false;
            st.model_failed = false;
            self.idx = odometer(self.first, m, self.idx.len());
            self.done_in_pass = 0;
            self.evaluations_at_pass_start = st.evaluations;
            return;
        }
        self.done_in_pass += 1;
        if self.first + self.done_in_pass >= self.end {
            self.finished = true;
            return;
        }
        // Odometer over the enumerated resistors.
        for digit in self.idx.iter_mut() {
            *digit += 1;
            if *digit < m {
                return;
            }
            *digit = 0;
        }
        self.finished = true;
    }
}

/// The `len` digits (base `m`, digit 0 the lowest) of combination number `c`.
fn odometer(mut c: u64, m: usize, len: usize) -> Vec<usize> {
    let m = m.max(1) as u64;
    (0..len)
        .map(|_| {
            let d = c % m;
            c /= m;
            d as usize
        })
        .collect()
}

/// Searches the standard-value combinations of `circuit`'s resistors that come closest to
/// `targets` (see the module notes for the objective and the optimality argument) in one call: a
/// [`SearchJob`] run to the end, refused with a suggestion once it has spent more than
/// [`MAX_EVALUATIONS`]. The circuit's other parameters (rails, device) are kept; its own resistor
/// values only break near-ties.
pub fn search<C: Circuit>(
    circuit: &C,
    targets: Thresholds,
    settings: &SearchSettings,
    checks: &CheckSettings,
) -> Result<SearchReport, DesignError> {
    let mut job = SearchJob::new(circuit, targets, settings, checks)?;
    run_job(&mut job, MAX_EVALUATIONS)
}

/// Evaluations per slice in [`run_job`].
const RUN_SLICE: u64 = 10_000;

/// Steps `job` to the end, as the page does, within a budget of `max_evaluations` evaluations: the
/// loop behind [`search`] and the command line (`evaluate`), so they give the page's answer or, when
/// the budget is spent first, an error that says so (how far it came, and what to change). The page
/// steps the same job to the end without a budget, with progress and Cancel.
pub fn run_job<C: Circuit>(job: &mut SearchJob<C>, max_evaluations: u64) -> Result<SearchReport, DesignError> {
    loop {
        let p = job.step(RUN_SLICE.min(max_evaluations.saturating_sub(job.progress().evaluations)).max(1));
        if p.finished {
            return Ok(job.finish());
        }
        if p.evaluations >= max_evaluations {
            return Err(DesignError::NotConverged {
                reason: format!(
                    "the standard-value search reached its budget of {max_evaluations} evaluations with {} of {} combinations done{} (about {} evaluations expected in all); narrow the resistance range or choose a coarser series, or run it on the page, which runs it to the end with progress and Cancel",
                    p.combinations_done,
                    p.combinations,
                    if p.unpruned_pass { " in its unpruned pass" } else { "" },
                    p.estimated_evaluations
                ),
            });
        }
    }
}

fn report<C: Circuit>(
    st: &Searcher<C>,
    params: &[crate::topology::Parameter],
    targets: Thresholds,
    settings: &SearchSettings,
    combinations: u64,
) -> SearchReport {
    let candidates = st
        .top
        .iter()
        .map(|e| {
            let parts: Vec<PartValue> = st
                .slots
                .iter()
                .zip(&e.resistors_ohm)
                .map(|(&s, &v)| PartValue {
                    id: params[s].id.clone(),
                    designator: params[s].designator.clone(),
                    value_ohm: v,
                })
                .collect();
            let current = e.current_a.or_else(|| {
                let mut values = st.values.clone();
                for (&s, &v) in st.slots.iter().zip(&e.resistors_ohm) {
                    values[s] = v;
                }
                st.template
                    .with_parameters(&values)
                    .and_then(|c| analyse(&c, &st.checks))
                    .ok()
                    .map(|a| a.quiescent_current_a)
            });
            let (eu, el) = st.obj.errors(e.thresholds.vt_upper_v, e.thresholds.vt_lower_v);
            Candidate {
                parts,
                vt_upper_v: e.thresholds.vt_upper_v,
                vt_lower_v: e.thresholds.vt_lower_v,
                error_upper_v: e.thresholds.vt_upper_v - targets.vt_upper_v,
                error_lower_v: e.thresholds.vt_lower_v - targets.vt_lower_v,
                error_upper_rel: eu,
                error_lower_rel: el,
                worst_error_rel: e.f,
                quiescent_current_a: current,
            }
        })
        .collect();
    SearchReport {
        targets,
        candidates,
        series: settings.series,
        values_per_resistor: st.grid.len(),
        combinations,
        evaluations: st.evaluations,
        solved_id: params[st.solved].id.clone(),
        exhaustive_combinations: st.exhaustive,
    }
}

/// The circuit with a candidate's resistor values put in (matched by parameter id).
pub fn apply<C: Circuit>(circuit: &C, candidate: &Candidate) -> Result<C, DesignError> {
    let params = circuit.parameters();
    let mut values: Vec<f64> = params.iter().map(|p| p.value).collect();
    for part in &candidate.parts {
        let i = params.iter().position(|p| p.id == part.id).ok_or_else(|| DesignError::Parameter {
            reason: format!("this circuit has no parameter \"{}\" to set", part.id),
        })?;
        values[i] = part.value_ohm;
    }
    circuit.with_parameters(&values)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::device::Comparator;
    use crate::topology::inverting::InvertingSchmitt;

    #[test]
    fn galloping_finds_the_same_change_as_halving_from_any_hint() {
        // Every length up to 70, every place of the change (0..=m, m: never true) and every hint,
        // also past the end: the same index as the standard library's binary partition point.
        for m in 0..70usize {
            for change in 0..=m {
                let flags: Vec<bool> = (0..m).map(|i| i >= change).collect();
                assert_eq!(flags.partition_point(|&f| !f), change);
                for hint in 0..m + 3 {
                    let calls = std::cell::Cell::new(0usize);
                    let got = partition_from(m, hint, |i| {
                        calls.set(calls.get() + 1);
                        flags[i]
                    });
                    assert_eq!(got, change, "m {m}, change at {change}, hint {hint}");
                    // Galloping costs at most about 2·log2(distance + 1) + 3 calls.
                    let d = change.abs_diff(hint.min(m)) as f64;
                    assert!(calls.get() as f64 <= 2.0 * (d + 1.0).log2() + 3.0, "m {m}, change {change}, hint {hint}: {} calls", calls.get());
                }
            }
        }
    }

    fn three_resistor() -> InvertingSchmitt {
        InvertingSchmitt::single_supply(10e3, 10e3, 20e3, Comparator::ideal(5.0))
    }

    #[test]
    fn bilinear_fit_reproduces_a_mobius_function() {
        let f = |x: f64| (2.0 + 3.0 * x) / (1.0 + 0.5 * x);
        let m = Bilinear::fit([1.0, 10.0, 100.0], [f(1.0), f(10.0), f(100.0)]).unwrap();
        for x in [1.5, 7.0, 42.0, 99.0] {
            assert!((m.eval(x) - f(x)).abs() < 1e-12, "{x}");
        }
        assert!(Bilinear::fit([1.0, 2.0, 3.0], [0.0, 1.0, 0.0]).is_none());
    }

    #[test]
    fn finds_an_exact_combination_when_one_exists() {
        // 10k/10k/20k gives exactly 3 V / 2 V (DOMAIN §1a rail-to-rail form), all E24 values.
        let s = SearchSettings { top_n: 3, r_min_ohm: 1e3, r_max_ohm: 100e3, ..SearchSettings::default() };
        let r =
            search(&three_resistor(), Thresholds { vt_upper_v: 3.0, vt_lower_v: 2.0 }, &s, &CheckSettings::default())
                .unwrap();
        let best = &r.candidates[0];
        assert!(best.worst_error_rel < 1e-12, "{best:?}");
        // The tie-break prefers the starting design's own impedance level.
        let v: Vec<f64> = best.parts.iter().map(|p| p.value_ohm).collect();
        assert_eq!(v, vec![10e3, 10e3, 20e3]);
        assert_eq!(r.exhaustive_combinations, 0);
        let c = apply(&three_resistor(), best).unwrap();
        assert_eq!(c.rf_ohm, 20e3);
    }

    #[test]
    fn current_budget_is_respected() {
        let budget = 30e-6;
        let s = SearchSettings { current_budget_a: Some(budget), ..SearchSettings::default() };
        let r =
            search(&three_resistor(), Thresholds { vt_upper_v: 2.9, vt_lower_v: 1.7 }, &s, &CheckSettings::default())
                .unwrap();
        assert_eq!(r.candidates.len(), 10);
        for c in &r.candidates {
            assert!(c.quiescent_current_a.unwrap() <= budget * (1.0 + 1e-12));
        }
    }

    #[test]
    fn settings_are_checked() {
        let c = three_resistor();
        let t = Thresholds { vt_upper_v: 3.0, vt_lower_v: 2.0 };
        let ck = CheckSettings::default();
        let bad = |s: SearchSettings| search(&c, t, &s, &ck).unwrap_err();
        assert!(matches!(
            bad(SearchSettings { r_min_ohm: 0.0, ..Default::default() }),
            DesignError::InvalidValue { .. }
        ));
        assert!(matches!(
            bad(SearchSettings { r_max_ohm: 10.0, ..Default::default() }),
            DesignError::InvalidValue { .. }
        ));
        assert!(matches!(bad(SearchSettings { top_n: 0, ..Default::default() }), DesignError::InvalidValue { .. }));
        assert!(matches!(
            bad(SearchSettings { r_min_ohm: 1.01e3, r_max_ohm: 1.05e3, ..Default::default() }),
            DesignError::InvalidValue { .. }
        ));
        assert!(matches!(
            bad(SearchSettings { series: ESeries::E192, r_min_ohm: 1.0, r_max_ohm: 1e9, ..Default::default() }),
            DesignError::Infeasible { .. }
        ));
        let nan = Thresholds { vt_upper_v: f64::NAN, vt_lower_v: 2.0 };
        assert!(search(&c, nan, &SearchSettings::default(), &ck).is_err());
    }

    #[test]
    fn targets_with_vt_upper_not_above_vt_lower_give_an_error_only() {
        let s = SearchSettings::default();
        let ck = CheckSettings::default();
        for (u, l) in [(1.7, 2.9), (2.0, 2.0)] {
            let t = Thresholds { vt_upper_v: u, vt_lower_v: l };
            let e = search(&three_resistor(), t, &s, &ck).unwrap_err();
            assert!(matches!(e, DesignError::Infeasible { .. }), "{e:?}");
            assert!(e.to_string().contains("must be above"), "{e}");
            assert!(SearchJob::new(&three_resistor(), t, &s, &ck).is_err());
        }
    }

    /// The non-inverting Schmitt with a reference divider and an ideal device: its thresholds depend
    /// on R1/R2 and Ra/Rb only through ratios, so every ratio has many scaled twins in E24.
    fn divider_reference() -> crate::topology::noninverting::NonInvertingSchmitt {
        crate::topology::noninverting::NonInvertingSchmitt::with_divider(10e3, 47e3, 10e3, 10e3, Comparator::ideal(5.0))
    }

    #[test]
    fn alternatives_are_distinct_not_scaled_copies() {
        let t = Thresholds { vt_upper_v: 2.9, vt_lower_v: 2.1 };
        let ck = CheckSettings::default();
        let base = SearchSettings { r_min_ohm: 1e3, r_max_ohm: 100e3, top_n: 10, ..SearchSettings::default() };
        let copies = search(&divider_reference(), t, &SearchSettings { distinct: false, ..base.clone() }, &ck).unwrap();
        let distinct = search(&divider_reference(), t, &base, &ck).unwrap();
        let obj = Objective::new(t);
        let same = |a: &Candidate, b: &Candidate| {
            same_alternative(
                &obj,
                &Thresholds { vt_upper_v: a.vt_upper_v, vt_lower_v: a.vt_lower_v },
                &Thresholds { vt_upper_v: b.vt_upper_v, vt_lower_v: b.vt_lower_v },
            )
        };
        // Without the rule the list is crowded by twins of its best entry (the complaint) …
        let twins_of_best = copies.candidates.iter().filter(|c| same(c, &copies.candidates[0])).count();
        assert!(twins_of_best >= 2, "{copies:#?}");
        // … with it, every pair of listed alternatives differs in VT+ or VT− by more than 10 ppm.
        assert_eq!(distinct.candidates.len(), 10);
        for (i, a) in distinct.candidates.iter().enumerate() {
            for b in &distinct.candidates[i + 1..] {
                assert!(!same(a, b), "{a:?}\n{b:?}");
            }
        }
        // The best entry is still the best there is, and the list stays ordered.
        assert_eq!(distinct.candidates[0].worst_error_rel, copies.candidates[0].worst_error_rel);
        assert!(distinct.candidates.windows(2).all(|w| w[0].worst_error_rel <= w[1].worst_error_rel + 1e-15));
    }

    #[test]
    fn a_job_in_slices_ends_as_one_search_does() {
        let t = Thresholds { vt_upper_v: 2.9, vt_lower_v: 1.7 };
        let ck = CheckSettings::default();
        let s = SearchSettings { series: ESeries::E12, current_budget_a: Some(100e-6), ..SearchSettings::default() };
        let whole = search(&three_resistor(), t, &s, &ck).unwrap();
        let mut job = SearchJob::new(&three_resistor(), t, &s, &ck).unwrap();
        let w = job.workload();
        assert_eq!((w.resistors, w.values_per_resistor, w.combinations), (3, 37, 37 * 37));
        assert_eq!(w.max_evaluations, 2 * 37 * 37 * 37 + 9 * 37);
        let mut slices = 0;
        let mut last = job.progress();
        assert!(!last.finished && last.estimated_evaluations == w.max_evaluations);
        while !last.finished {
            let p = job.step(7);
            assert!(p.evaluations >= last.evaluations && p.evaluations <= w.max_evaluations);
            assert!(p.estimated_evaluations >= p.evaluations && p.estimated_evaluations <= w.max_evaluations);
            assert!((0.0..=1.0).contains(&p.fraction()));
            last = p;
            slices += 1;
        }
        assert!(slices > 10, "{slices} slices");
        assert_eq!(last.estimated_evaluations, last.evaluations);
        assert_eq!(last.remaining_s(3.0), Some(0.0));
        assert_eq!(job.finish(), whole);
    }

    #[test]
    fn a_spent_budget_gives_an_error_that_says_so() {
        let t = Thresholds { vt_upper_v: 2.9, vt_lower_v: 1.7 };
        let ck = CheckSettings::default();
        let s = SearchSettings { series: ESeries::E96, ..SearchSettings::default() };
        let mut job = SearchJob::new(&three_resistor(), t, &s, &ck).unwrap();
        let e = run_job(&mut job, 50).unwrap_err();
        assert!(matches!(e, DesignError::NotConverged { .. }), "{e:?}");
        assert!(e.to_string().contains("budget of 50 evaluations"), "{e}");
        // With room, run_job ends where search does, and where a job stepped by hand ends.
        let mut job = SearchJob::new(&three_resistor(), t, &s, &ck).unwrap();
        let whole = search(&three_resistor(), t, &s, &ck).unwrap();
        assert_eq!(run_job(&mut job, MAX_EVALUATIONS).unwrap(), whole);
        assert!(job.workload().bound_s(1e-6) >= whole.evaluations as f64 * 1e-6);
    }

    #[test]
    fn remaining_time_is_extrapolated_from_the_rate() {
        let p = Progress {
            combinations_done: 10,
            combinations: 40,
            evaluations: 100,
            unpruned_pass: false,
            estimated_evaluations: 400,
            finished: false,
        };
        // 100 evaluations in 0.5 s: 300 more take 1.5 s.
        assert!((p.remaining_s(0.5).unwrap() - 1.5).abs() < 1e-12);
        assert_eq!(p.fraction(), 0.25);
        assert_eq!(Progress { evaluations: 0, ..p }.remaining_s(0.5), None);
        assert_eq!(p.remaining_s(f64::NAN), None);
    }

    #[test]
    fn settings_default_from_empty_json() {
        let s: SearchSettings = serde_json::from_str("{}").unwrap();
        assert_eq!(s, SearchSettings::default());
        let s: SearchSettings = serde_json::from_str(r#"{"series":"e96","current_budget_a":1e-4}"#).unwrap();
        assert_eq!((s.series, s.current_budget_a), (ESeries::E96, Some(1e-4)));
    }
}
