//! How well could any judge tell the field population's faults apart from the readings it has?
//!
//! The field population (tests/reference/field_population.csv) draws each real unit from a
//! known recipe (tests/reference/field_population.py): crest, warm winding, leakage, parts
//! within tolerance, junction spread, mains, a fault of a drawn size, meter error. A judge that
//! weighs a unit's readings by Bayes' rule (the likelihood of the readings under each
//! condition, integrated over everything the readings leave open, times the condition's prior)
//! makes the fewest mistakes that its beliefs allow: it is the Bayes classifier of statistical
//! pattern recognition (any textbook of the subject). With the recipe's own beliefs (the
//! faults' sizes, their shares of the population, the mains' spread) it makes the fewest
//! mistakes any judge can make on these readings: a ceiling for the diagnosis. With railcheck's
//! beliefs (each fault's size anywhere in the diagnosis's search range, the file's +-10 % mains,
//! every fault a prior of exp(-2) against health's 1, the diagnosis's other faults as rivals) it
//! shows how far those beliefs can go, however exact the arithmetic.
//!
//! The likelihoods are Monte Carlo integrals over the beliefs, with railcheck's own engine in
//! place of ngspice (tests/field_population_data.rs holds the engine to ngspice's readings of
//! every unit, given its real circuit). The mains, which moves every figure, is integrated on
//! a fine grid for each draw of the rest, through quadratics through solves at most 0.06
//! apart; the meters' errors are the recipe's uniform ones (DC +-0.3 %, ripple +-3 %, mains
//! +-0.5 %).
//!
//!     cargo run --release --example detection_ceiling [DRAWS [BELIEF [FILES]]]
//!
//! DRAWS: draws of each condition on each supply (default 1500; 2500 takes about 5 minutes on
//! two cores). BELIEF: `recipe` (default), `broad` (railcheck's), `recipe-sizes` (railcheck's but
//! for the recipe's fault sizes and mains spread) or `recipe-fault-sizes` (railcheck's but for
//! the recipe's fault sizes). FILES: `stated` (default) or `left-out`, where the judge draws
//! the winding from railcheck's assumed range for the file; a judge that knows less than the
//! stated file cannot do better, so the stated ceiling bounds the left-out one too.

#[path = "../tests/common/field.rs"]
mod field;
#[path = "../tests/common/random_supply.rs"]
mod random_supply;

use anyhow::anyhow;
use railcheck::circuit::winding::WindingSource;
use railcheck::supply::Supply;
use random_supply::log_between;
use std::collections::BTreeMap;

/// The recipe's fault plan (field_population.py's FAULT_PLAN): each supply's eight faulted
/// units beside its four healthy ones.
const PLAN: [(&str, [&str; 8]); 8] = [
    ("hw_relay", [C, C, E, E, O, H, M, M]),
    ("ct_amp", [C, E, L, L, O, H, H, M]),
    ("br_lv", [C, C, E, E, L, L, H, M]),
    ("br_small", [C, C, E, L, O, O, H, M]),
    ("dbl_bias", [C, C, E, E, H, H, M, M]),
    ("sr_preamp", [C, E, L, L, O, O, H, M]),
    ("crc_br", [C, E, L, L, O, O, H, M]),
    ("us_bench", [E, L, L, O, O, H, M, M]),
];
const C: &str = "capacitance-low";
const E: &str = "esr-high";
const L: &str = "rectifier-leg-open";
const O: &str = "capacitor-open";
const H: &str = "load-heavy";
const M: &str = "mains-low";
const SL: &str = "secondary-low";
const LL: &str = "load-light";
const MH: &str = "mains-high";

/// What the judge believes about the faults' sizes and shares.
#[derive(Clone, Copy, PartialEq, Eq, Debug)]
enum Belief {
    /// The recipe's own: each fault's drawn range and its share of the population.
    Recipe,
    /// railcheck's: each fault's size anywhere in the diagnosis's search range (log-uniform),
    /// every fault a prior of exp(-2) against health's 1 (a misfit cost of 4), the faults the
    /// recipe never draws (secondary low, load light, mains high) among them, and no evidence
    /// taken from whether the mains was read.
    Broad,
    /// railcheck's in all but the sizes: each fault's size and the mains's spread drawn from
    /// the recipe's ranges (what a judge could know only from the population itself).
    RecipeSizes,
    /// As RecipeSizes, but the mains spread railcheck's (the file's +-10 %): the faults' sizes
    /// alone from the recipe.
    RecipeFaultSizes,
}

impl Belief {
    /// Whose ranges the sizes come from.
    fn recipe_sizes(self) -> bool {
        matches!(
            self,
            Belief::Recipe | Belief::RecipeSizes | Belief::RecipeFaultSizes
        )
    }

    /// Whose spread the mains has.
    fn recipe_mains(self) -> bool {
        matches!(self, Belief::Recipe | Belief::RecipeSizes)
    }
}
const HEALTHY_PER_SUPPLY: usize = 4;

/// Uniform between `lo` and `hi`, from `u`'s numbers in [0, 1).
fn uniform(u: &mut dyn FnMut() -> f64, lo: f64, hi: f64) -> f64 {
    lo + (hi - lo) * u()
}

/// The mains factor's range under a condition (the recipe: +-6 %, 13-20 % low for mains-low;
/// railcheck: the file's +-10 %, below or above it for a mains fault).
fn mains_range(condition: &str, belief: Belief) -> (f64, f64) {
    match (belief.recipe_mains(), condition) {
        (true, M) => (0.80, 0.87),
        (true, MH) => (1.1, 1.5),
        (true, _) => (0.94, 1.06),
        (false, M) => (0.4, 0.9),
        (false, MH) => (1.1, 1.5),
        (false, _) => (0.9, 1.1),
    }
}

fn has_second(s: &Supply) -> bool {
    use railcheck::supply::{FilterKind, Topology};
    matches!(
        s.rectifier.topology,
        Topology::Doubler | Topology::SplitRail
    ) || s.filter.kind == FilterKind::Crc
}

/// One real unit as the judge believes the recipe draws it (its mains set later, here the
/// nominal).
fn draw(
    s: &Supply,
    condition: &str,
    belief: Belief,
    u: &mut dyn FnMut() -> f64,
) -> field::RealCircuit {
    let crest = uniform(u, 1.34, std::f64::consts::SQRT_2);
    // A file that leaves the winding out: anywhere in railcheck's assumed range (log-uniform;
    // without the range's allowance for leakage, which is drawn here as the recipe draws it);
    // a stated one: the recipe's 0-30 % warm.
    let w = s.winding().expect("the field supplies' windings resolve");
    let whole = w.secondary_ohms + w.primary_ohms / (w.ratio * w.ratio);
    let winding = match w.source {
        WindingSource::Assumed {
            low_ohms,
            high_ohms,
            ..
        } => log_between(u, low_ohms, high_ohms) / whole,
        _ => uniform(u, 1.0, 1.3),
    };
    let leakage_h =
        uniform(u, 0.1, 0.5) * whole * winding / (2.0 * std::f64::consts::PI * s.mains.hz);
    let cap = uniform(u, 0.8, 1.2);
    let cap2 = has_second(s).then(|| uniform(u, 0.8, 1.2));
    let load = uniform(u, 0.95, 1.05);
    let is = log_between(u, 0.5, 2.0);
    let esr = s.filter.esr_ohms;
    let esr_lo = (2.0 * esr).max(esr + 0.1);
    let fault = match (belief.recipe_sizes(), condition) {
        (true, C) => Some(uniform(u, 0.3, 0.6)),
        (true, E) => Some(esr * uniform(u, 10.0, 40.0)),
        (true, H) => Some(uniform(u, 1.5, 2.5)),
        (false, C) => Some(log_between(u, 0.01, 0.8)),
        (false, E) => Some(log_between(u, esr_lo, esr_lo.max(0.5) * 200.0)),
        (false, H) => Some(log_between(u, 1.15, 8.0)),
        (_, SL) => Some(log_between(u, 1.03, 3.0)),
        (_, LL) => Some(uniform(u, 0.05, 0.85)),
        _ => None,
    };
    field::RealCircuit {
        crest,
        winding_factor: winding,
        leakage_h,
        cap_factor: cap,
        cap2_factor: cap2,
        load_factor: load,
        is_factor: is,
        mains_vrms: s.mains.vrms,
        fault_param: fault,
    }
}

/// The engine's (DC, ripple p-p, ripple frequency) for a drawn unit at a mains factor.
fn solve(
    s: &Supply,
    condition: &str,
    d: &field::RealCircuit,
    mains: f64,
) -> Option<(f64, f64, f64)> {
    let real = field::RealCircuit {
        mains_vrms: mains * s.mains.vrms,
        ..*d
    };
    let f = field::solve_real(s, condition, &real).ok()?;
    Some((f.dc_v, f.ripple_pp_v, f.ripple_hz))
}

/// A drawn unit's figures as functions of the mains factor: quadratics through solves spaced
/// at most 0.06 apart across the condition's mains range.
struct Curve {
    m: Vec<f64>,
    dc: Vec<f64>,
    pp: Vec<f64>,
    hz: f64,
}

impl Curve {
    fn at(&self, x: f64) -> (f64, f64) {
        // The three points nearest x.
        let k = self.m.len();
        let i = self
            .m
            .iter()
            .position(|&m| m >= x)
            .unwrap_or(k - 1)
            .clamp(1, k - 2)
            - 1;
        let (a, b, c) = (self.m[i], self.m[i + 1], self.m[i + 2]);
        let l0 = (x - b) * (x - c) / ((a - b) * (a - c));
        let l1 = (x - a) * (x - c) / ((b - a) * (b - c));
        let l2 = (x - a) * (x - b) / ((c - a) * (c - b));
        (
            l0 * self.dc[i] + l1 * self.dc[i + 1] + l2 * self.dc[i + 2],
            l0 * self.pp[i] + l1 * self.pp[i + 1] + l2 * self.pp[i + 2],
        )
    }
}

fn curve(s: &Supply, condition: &str, belief: Belief, d: &field::RealCircuit) -> Option<Curve> {
    let (lo, hi) = mains_range(condition, belief);
    let k = (((hi - lo) / 0.06).ceil() as usize + 1).max(3);
    let m: Vec<f64> = (0..k)
        .map(|i| lo + (hi - lo) * i as f64 / (k - 1) as f64)
        .collect();
    let (mut dc, mut pp, mut hz) = (Vec::new(), Vec::new(), 0.0);
    for &x in &m {
        let (v, r, f) = solve(s, condition, d, x)?;
        dc.push(v);
        pp.push(r);
        hz = f;
    }
    Some(Curve { m, dc, pp, hz })
}

/// The density of a reading `r` of a true value `t` read with a uniform relative error of
/// +-`e` (the recipe's meters).
fn meter(r: f64, t: f64, e: f64) -> f64 {
    if t > 0.0 && (r / t - 1.0).abs() <= e {
        1.0 / (2.0 * e * t)
    } else {
        0.0
    }
}

const MAINS_GRID: usize = 400;

/// The likelihood of one unit's readings under a condition: the mean over the draws of the
/// readings' density integrated over the mains (the midpoint rule on MAINS_GRID points).
fn likelihood(
    u: &field::FieldUnit,
    nominal_vrms: f64,
    condition: &str,
    belief: Belief,
    curves: &[Curve],
) -> f64 {
    let r = &u.readings;
    let (Some(dc), Some(pp), Some(hz)) = (r.dc_v, r.ripple_pp_v, r.ripple_hz) else {
        return 0.0;
    };
    // Whether the mains was read is itself evidence: the recipe reads it in half the units
    // and never in a mains-low one.
    let read_share = match (belief, condition == M, r.mains_vrms.is_some()) {
        (Belief::Broad | Belief::RecipeSizes | Belief::RecipeFaultSizes, _, _) => 1.0,
        (Belief::Recipe, true, true) => return 0.0,
        (Belief::Recipe, true, false) => 1.0,
        (Belief::Recipe, false, _) => 0.5,
    };
    let (lo, hi) = mains_range(condition, belief);
    let step = (hi - lo) / MAINS_GRID as f64;
    let mut total = 0.0;
    for c in curves {
        if (c.hz - hz).abs() > 0.1 * hz {
            continue;
        }
        let mut sum = 0.0;
        for i in 0..MAINS_GRID {
            let m = lo + step * (i as f64 + 0.5);
            let mut p = 1.0 / (hi - lo);
            if let Some(v) = r.mains_vrms {
                p *= meter(v, m * nominal_vrms, 0.005) * nominal_vrms;
                if p == 0.0 {
                    continue;
                }
            }
            let (d, q) = c.at(m);
            p *= meter(dc, d, 0.003) * meter(pp, q, 0.03);
            sum += p * step;
        }
        total += sum;
    }
    read_share * total / curves.len().max(1) as f64
}

fn main() -> anyhow::Result<()> {
    let draws: usize = std::env::args()
        .nth(1)
        .map(|a| a.parse())
        .transpose()?
        .unwrap_or(1500);
    let belief = match std::env::args().nth(2).as_deref() {
        None | Some("recipe") => Belief::Recipe,
        Some("broad") => Belief::Broad,
        Some("recipe-sizes") => Belief::RecipeSizes,
        Some("recipe-fault-sizes") => Belief::RecipeFaultSizes,
        Some(other) => {
            return Err(anyhow!(
                "belief must be recipe, broad, recipe-sizes or recipe-fault-sizes (got {other})"
            ));
        }
    };
    let variant = match std::env::args().nth(3).as_deref() {
        None | Some("stated") => field::Variant::Stated,
        Some("left-out") => field::Variant::Unstated,
        Some(other) => {
            return Err(anyhow!(
                "the files must be stated or left-out (got {other})"
            ));
        }
    };
    let units = field::population().map_err(|e| anyhow!(e))?;

    // The engine against each unit's readings is tests/field_population_data.rs's to check.
    let mut right = BTreeMap::<String, (usize, usize)>::new();
    let (mut fa, mut healthy, mut found, mut faulted, mut part) = (0, 0, 0, 0, 0);
    let mut expected_found = 0.0;
    for (name, plan) in PLAN {
        let s = field::load_supply(name, variant).map_err(|e| anyhow!(e))?;
        // Each condition's prior weight.
        let mut counts = BTreeMap::<&str, f64>::new();
        match belief {
            Belief::Recipe => {
                counts.insert("healthy", HEALTHY_PER_SUPPLY as f64 / 12.0);
                for c in plan {
                    *counts.entry(c).or_default() += 1.0 / 12.0;
                }
            }
            Belief::Broad | Belief::RecipeSizes | Belief::RecipeFaultSizes => {
                counts.insert("healthy", 1.0);
                let mut faults = vec![C, E, O, H, M, LL, MH];
                if s.rectifier.topology.is_full_wave() {
                    faults.push(L);
                }
                for c in faults {
                    counts.insert(c, (-2.0f64).exp());
                }
                counts.insert(SL, (-2.5f64).exp());
            }
        }
        // Each condition's draws, solved on two threads.
        let mut curves = BTreeMap::<&str, Vec<Curve>>::new();
        for &condition in counts.keys() {
            let seed = name
                .bytes()
                .chain(condition.bytes())
                .fold(17u64, |h, b| h.wrapping_mul(31).wrapping_add(b as u64));
            let half = draws / 2;
            let work = |from: usize, to: usize| -> Vec<Curve> {
                let mut u = random_supply::xorshift(seed ^ (from as u64).wrapping_mul(0x9E37));
                (from..to)
                    .filter_map(|_| {
                        curve(&s, condition, belief, &draw(&s, condition, belief, &mut u))
                    })
                    .collect()
            };
            let (a, b) = std::thread::scope(|sc| {
                let h = sc.spawn(|| work(0, half));
                let b = work(half, draws);
                (h.join().expect("worker"), b)
            });
            let mut all = a;
            all.extend(b);
            curves.insert(condition, all);
        }
        for u in units.iter().filter(|u| u.supply == name) {
            let mut post: Vec<(&str, f64)> = counts
                .iter()
                .map(|(&c, &w)| (c, w * likelihood(u, s.mains.vrms, c, belief, &curves[c])))
                .collect();
            let total: f64 = post.iter().map(|p| p.1).sum();
            for p in post.iter_mut() {
                p.1 /= total.max(1e-300);
            }
            post.sort_by(|a, b| b.1.total_cmp(&a.1));
            let top = post[0].0;
            let truth_p = post
                .iter()
                .find(|p| p.0 == u.condition)
                .map_or(0.0, |p| p.1);
            let e = right.entry(u.condition.clone()).or_default();
            e.0 += usize::from(top == u.condition);
            e.1 += 1;
            if u.condition == "healthy" {
                healthy += 1;
                fa += usize::from(top != "healthy");
            } else {
                faulted += 1;
                found += usize::from(top == u.condition);
                part += usize::from(field::part_of(top) == field::part_of(&u.condition));
                expected_found += truth_p;
                if top != u.condition {
                    println!(
                        "  {:<13} {:<19} -> {:<19} ({:.2}; truth {:.2})",
                        u.unit, u.condition, top, post[0].1, truth_p
                    );
                }
            }
        }
    }
    println!(
        "\nBayes judge ({draws} draws a condition a supply, belief {belief:?}), {}:\n  \
         false alarms {fa}/{healthy}, detected {found}/{faulted} ({:.0} %), failed part \
         first {part}/{faulted}\n  the truth's mean posterior over the faulted units: {:.2}",
        variant.label(),
        100.0 * found as f64 / faulted as f64,
        expected_found / faulted as f64
    );
    for (c, (r, n)) in right {
        println!("  {c:<20} {r}/{n}");
    }
    Ok(())
}
