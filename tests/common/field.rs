//! The simulated field population of issue 10: real units whose circuits differ from their
//! files as real units do (tests/reference/field_population.csv, written with ngspice by
//! tests/reference/field_population.py), each unit's readings diagnosed against its supply's
//! file, once with the winding resistance stated and once without it, and counted as false
//! alarms (healthy units not ranked healthy) and detections (faulted units ranked as their
//! fault). One piece of code for `examples/field_population.rs` (which includes this file by
//! path) and for any test that declares `mod common;` with a `common/mod.rs` naming `field`.
// A test may use only part of this module.
#![allow(dead_code)]

use railcheck::diagnose::{Fault, Part, Readings, diagnose};
use railcheck::supply::Supply;
use std::collections::{BTreeMap, HashMap};

/// The population's readings and true parameters, one row per unit.
pub const CSV_PATH: &str = concat!(
    env!("CARGO_MANIFEST_DIR"),
    "/tests/reference/field_population.csv"
);
/// The supplies' files: `NAME.toml` (winding resistance stated) and `NAME-unstated.toml`.
pub const FIELD_DIR: &str = concat!(env!("CARGO_MANIFEST_DIR"), "/tests/reference/field");

/// Which of a supply's two files a unit is judged against.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Variant {
    /// `secondary_ohms` and `primary_ohms` as measured cold.
    Stated,
    /// The same file without them (railcheck takes 0 ohm).
    Unstated,
}

impl Variant {
    pub const BOTH: [Variant; 2] = [Variant::Stated, Variant::Unstated];

    /// Words for a report's heading.
    pub fn label(self) -> &'static str {
        match self {
            Variant::Stated => "winding resistance stated",
            Variant::Unstated => "winding resistance left out",
        }
    }

    /// The file of `supply` for this variant, e.g. `br_lv-unstated.toml`.
    pub fn file_name(self, supply: &str) -> String {
        match self {
            Variant::Stated => format!("{supply}.toml"),
            Variant::Unstated => format!("{supply}-unstated.toml"),
        }
    }
}

/// One simulated unit: what it really is and what the meters read.
#[derive(Debug, Clone, PartialEq)]
pub struct FieldUnit {
    pub unit: String,
    /// Which visit of the unit, in the calibration set (`baseline`, `later-healthy`, ...);
    /// empty in the population.
    pub visit: String,
    /// The base supply's file name without `.toml` or `-unstated`.
    pub supply: String,
    /// `healthy` or the fault's key (`capacitance-low`, `esr-high`, ...).
    pub condition: String,
    /// What the unit really is, which its file does not say.
    pub real: RealCircuit,
    /// Mains, DC, ripple peak to peak and ripple frequency as read (volts, hertz).
    pub readings: Readings,
    /// The ripple's RMS as the scope measures it on the same capture (volts), kept apart
    /// from `readings`: see [`with_scope_rms`]. None where the CSV has no such column.
    pub scope_rms_v: Option<f64>,
}

/// The same units with the scope's ripple RMS read as well as its peak to peak.
pub fn with_scope_rms(units: &[FieldUnit]) -> Vec<FieldUnit> {
    units
        .iter()
        .map(|u| {
            let mut u = u.clone();
            u.readings.ripple_rms_v = u.scope_rms_v;
            u
        })
        .collect()
}

/// Parses the population's CSV: `#` comment lines, a header, one row per unit.
pub fn parse(text: &str) -> Result<Vec<FieldUnit>, String> {
    let mut lines = text
        .lines()
        .enumerate()
        .filter(|(_, l)| !l.trim().is_empty() && !l.starts_with('#'));
    let (_, header) = lines.next().ok_or("the CSV has no header line")?;
    let columns: Vec<&str> = header.split(',').map(str::trim).collect();
    let mut units = Vec::new();
    for (i, line) in lines {
        let line_no = i + 1;
        let cells: Vec<&str> = line.split(',').map(str::trim).collect();
        if cells.len() != columns.len() {
            return Err(format!(
                "line {line_no}: {} cells, the header has {}",
                cells.len(),
                columns.len()
            ));
        }
        let row: HashMap<&str, &str> = columns.iter().copied().zip(cells).collect();
        let text_of = |key: &str| -> Result<String, String> {
            row.get(key)
                .map(|s| s.to_string())
                .ok_or_else(|| format!("line {line_no}: no column `{key}`"))
        };
        let maybe = |key: &str| -> Result<Option<f64>, String> {
            let cell = row
                .get(key)
                .ok_or_else(|| format!("line {line_no}: no column `{key}`"))?;
            if cell.is_empty() {
                return Ok(None);
            }
            cell.parse::<f64>()
                .map(Some)
                .map_err(|_| format!("line {line_no}: `{key}` is not a number (got {cell:?})"))
        };
        let number = |key: &str| -> Result<f64, String> {
            maybe(key)?.ok_or_else(|| format!("line {line_no}: `{key}` is empty"))
        };
        units.push(FieldUnit {
            unit: text_of("unit")?,
            visit: row.get("visit").map(|s| s.to_string()).unwrap_or_default(),
            supply: text_of("supply")?,
            condition: text_of("condition")?,
            real: RealCircuit {
                crest: number("crest")?,
                winding_factor: number("winding_factor")?,
                leakage_h: number("leakage_h")?,
                cap_factor: number("cap_factor")?,
                cap2_factor: maybe("cap2_factor")?,
                load_factor: number("load_factor")?,
                is_factor: number("is_factor")?,
                mains_vrms: number("true_mains_vrms")?,
                fault_param: maybe("fault_param")?,
            },
            readings: Readings {
                mains_vrms: maybe("mains_vrms")?,
                dc_v: Some(number("dc_v")?),
                ripple_pp_v: Some(number("ripple_pp_v")?),
                ripple_hz: Some(number("ripple_hz")?),
                ..Readings::default()
            },
            scope_rms_v: match row.get("ripple_rms_v") {
                Some(_) => maybe("ripple_rms_v")?,
                None => None,
            },
        });
    }
    Ok(units)
}

/// The calibration set: a baseline and three later visits of 16 more simulated units.
pub const CALIBRATION_CSV_PATH: &str = concat!(
    env!("CARGO_MANIFEST_DIR"),
    "/tests/reference/field_calibration.csv"
);

/// The stored calibration set (tests/reference/field_calibration.csv), one row per visit.
pub fn calibration_visits() -> Result<Vec<FieldUnit>, String> {
    read(CALIBRATION_CSV_PATH)
}

/// The units of the stored CSV at `path`.
fn read(path: &str) -> Result<Vec<FieldUnit>, String> {
    let text = std::fs::read_to_string(path).map_err(|e| format!("reading {path}: {e}"))?;
    parse(&text)
}

/// The stored population (tests/reference/field_population.csv).
pub fn population() -> Result<Vec<FieldUnit>, String> {
    read(CSV_PATH)
}

/// A held-out population: the same recipe and supplies drawn with another seed
/// (`field_population.py --seed 20261203 --out ...`), for checking a rule on units it was not
/// chosen on.
pub const HOLDOUT_CSV_PATH: &str = concat!(
    env!("CARGO_MANIFEST_DIR"),
    "/tests/reference/field_population_holdout.csv"
);

/// The stored held-out population (tests/reference/field_population_holdout.csv).
pub fn holdout() -> Result<Vec<FieldUnit>, String> {
    read(HOLDOUT_CSV_PATH)
}

/// The file of `supply` in `variant`, parsed.
pub fn load_supply(supply: &str, variant: Variant) -> Result<Supply, String> {
    let path = format!("{FIELD_DIR}/{}", variant.file_name(supply));
    let text = std::fs::read_to_string(&path).map_err(|e| format!("reading {path}: {e}"))?;
    Supply::from_toml_str(&text).map_err(|e| format!("{path}: {e}"))
}

/// One unit's diagnosis, reduced to what the counts need.
#[derive(Debug, Clone, PartialEq)]
pub struct Outcome {
    pub unit: String,
    pub supply: String,
    /// The unit's true condition.
    pub truth: String,
    /// The top hypothesis' fault key, or `refused: REASON` when the readings were refused.
    pub top: String,
    /// The top hypothesis' score (0 when refused).
    pub score: f64,
    /// The engine's verdict: healthy, suspect or fault (empty when refused).
    pub verdict: String,
    /// The misfits (chi-square with the hypothesis's prior) of the top hypothesis and of the
    /// unit's true condition: how far apart the readings put them (NaN when refused or when
    /// the truth was not among the hypotheses).
    pub top_misfit: f64,
    pub truth_misfit: f64,
    /// The part the diagnosis names as more likely than not at fault, if any.
    pub likely_part: Option<Part>,
}

impl Outcome {
    /// Whether the top hypothesis is the unit's true condition.
    pub fn right(&self) -> bool {
        self.top == self.truth
    }
}

/// Every unit's outcome against one variant of the files.
#[derive(Debug, Clone, PartialEq)]
pub struct Tally {
    pub variant: Variant,
    pub outcomes: Vec<Outcome>,
}

impl Tally {
    /// (units of the healthy ones, or of the faulted ones, for which `pred` holds, those
    /// units).
    fn count(&self, healthy: bool, pred: impl Fn(&Outcome) -> bool) -> (usize, usize) {
        let among: Vec<_> = self
            .outcomes
            .iter()
            .filter(|o| (o.truth == "healthy") == healthy)
            .collect();
        (among.iter().filter(|o| pred(o)).count(), among.len())
    }

    /// (healthy units whose top hypothesis is not healthy, healthy units).
    pub fn false_alarms(&self) -> (usize, usize) {
        self.count(true, |o| !o.right())
    }

    /// (faulted units whose top hypothesis is their fault, faulted units).
    pub fn detected(&self) -> (usize, usize) {
        self.count(false, Outcome::right)
    }

    /// (faulted units whose top hypothesis names the failed part, faulted units): the filter
    /// capacitor for capacitance-low, ESR-high and capacitor-open alike (the same part to
    /// replace, told apart by the next check), the rectifier, the load, the mains.
    pub fn part_found(&self) -> (usize, usize) {
        self.count(false, |o| part_of(&o.top) == part_of(&o.truth))
    }

    /// (faulted units whose likely part, named when more than half the belief points at one,
    /// is the part that failed, faulted units).
    pub fn likely_part_right(&self) -> (usize, usize) {
        self.count(false, |o| {
            o.likely_part.is_some() && o.likely_part == part_of_key(&o.truth)
        })
    }

    /// Faulted units whose likely part is named and is not the part that failed: a good part
    /// the technician would open up on railcheck's word.
    pub fn likely_part_wrong(&self) -> usize {
        self.count(false, |o| {
            o.likely_part.is_some() && o.likely_part != part_of_key(&o.truth)
        })
        .0
    }

    /// (healthy units for which a likely part is named, healthy units): a part named on a
    /// healthy unit would send the technician to open it up.
    pub fn likely_part_on_healthy(&self) -> (usize, usize) {
        self.count(true, |o| o.likely_part.is_some())
    }

    /// For each true condition: (condition, ranked right, units), in key order.
    pub fn by_condition(&self) -> Vec<(String, usize, usize)> {
        Self::group(self.outcomes.iter().map(|o| (o.truth.clone(), o.right())))
    }

    /// For each supply: (supply, ranked right, units), in name order.
    pub fn by_supply(&self) -> Vec<(String, usize, usize)> {
        Self::group(self.outcomes.iter().map(|o| (o.supply.clone(), o.right())))
    }

    fn group(items: impl Iterator<Item = (String, bool)>) -> Vec<(String, usize, usize)> {
        let mut map: BTreeMap<String, (usize, usize)> = BTreeMap::new();
        for (key, right) in items {
            let e = map.entry(key).or_default();
            e.0 += usize::from(right);
            e.1 += 1;
        }
        map.into_iter().map(|(k, (r, n))| (k, r, n)).collect()
    }

    /// The units whose top hypothesis is not their condition.
    pub fn misses(&self) -> Vec<&Outcome> {
        self.outcomes.iter().filter(|o| !o.right()).collect()
    }
}

/// The engine's part for a fault key (None for `healthy` or an unknown key).
pub fn part_of_key(key: &str) -> Option<Part> {
    Fault::ALL
        .iter()
        .find(|f| f.key() == key)
        .and_then(|f| f.part())
}

/// The part a fault key concerns, as a technician would go for it.
pub fn part_of(fault: &str) -> &str {
    match fault {
        "capacitance-low" | "esr-high" | "capacitor-open" => "filter capacitor",
        "rectifier-leg-open" => "rectifier",
        "load-heavy" | "load-light" => "load",
        "mains-low" | "mains-high" => "mains",
        other => other,
    }
}

/// Diagnoses every unit against its supply's file in `variant` and keeps the top hypothesis.
pub fn tally(units: &[FieldUnit], variant: Variant) -> Result<Tally, String> {
    let mut supplies: HashMap<String, Supply> = HashMap::new();
    let mut outcomes = Vec::with_capacity(units.len());
    for u in units {
        if !supplies.contains_key(&u.supply) {
            supplies.insert(u.supply.clone(), load_supply(&u.supply, variant)?);
        }
        let supply = &supplies[&u.supply];
        let (top, score, verdict, top_misfit, truth_misfit, likely_part) =
            match diagnose(supply, &u.readings) {
                Ok(d) => {
                    let h = &d.hypotheses[0];
                    let truth = d
                        .hypotheses
                        .iter()
                        .find(|t| t.fault.key() == u.condition)
                        .map_or(f64::NAN, |t| t.misfit);
                    (
                        h.fault.key().to_string(),
                        h.score,
                        d.verdict.to_string(),
                        h.misfit,
                        truth,
                        d.likely_part().map(|p| p.part),
                    )
                }
                Err(e) => (
                    format!("refused: {e}"),
                    0.0,
                    String::new(),
                    f64::NAN,
                    f64::NAN,
                    None,
                ),
            };
        outcomes.push(Outcome {
            unit: u.unit.clone(),
            supply: u.supply.clone(),
            truth: u.condition.clone(),
            top,
            score,
            verdict,
            top_misfit,
            truth_misfit,
            likely_part,
        });
    }
    Ok(Tally { variant, outcomes })
}

fn pct(part: usize, whole: usize) -> f64 {
    if whole == 0 {
        0.0
    } else {
        100.0 * part as f64 / whole as f64
    }
}

/// The tally as text: false alarms, detection, per condition and per supply, the misses.
pub fn report(t: &Tally) -> String {
    use std::fmt::Write;
    let mut s = String::new();
    let (fa, healthy) = t.false_alarms();
    let (det, faulted) = t.detected();
    let _ = writeln!(s, "== {} ==", t.variant.label());
    let _ = writeln!(
        s,
        "false alarms: {fa}/{healthy} healthy units not ranked healthy ({:.0} %)",
        pct(fa, healthy)
    );
    let _ = writeln!(
        s,
        "detection:    {det}/{faulted} faulted units ranked as their fault ({:.0} %)",
        pct(det, faulted)
    );
    let (part, _) = t.part_found();
    let _ = writeln!(
        s,
        "failed part:  {part}/{faulted} faulted units with the failed part ranked first ({:.0} %)",
        pct(part, faulted)
    );
    let (lp, _) = t.likely_part_right();
    let (lp_healthy, _) = t.likely_part_on_healthy();
    let _ = writeln!(
        s,
        "likely part:  {lp}/{faulted} faulted units with the failed part named as more likely \
         than not ({:.0} %); a wrong part named on {} faulted units and a part on \
         {lp_healthy}/{healthy} healthy units",
        pct(lp, faulted),
        t.likely_part_wrong()
    );
    let _ = writeln!(s, "by condition (ranked right / units):");
    for (k, r, n) in t.by_condition() {
        let _ = writeln!(s, "  {k:<20} {r:>3}/{n:<3} ({:.0} %)", pct(r, n));
    }
    let _ = writeln!(s, "by supply (ranked right / units):");
    for (k, r, n) in t.by_supply() {
        let _ = writeln!(s, "  {k:<20} {r:>3}/{n:<3} ({:.0} %)", pct(r, n));
    }
    let misses = t.misses();
    let _ = writeln!(
        s,
        "misses ({}): unit, truth -> top hypothesis (score, verdict; misfit of the top, of the truth)",
        misses.len()
    );
    for o in misses {
        let _ = writeln!(
            s,
            "  {:<14} {:<20} -> {} ({:.2}, {}; {:.1}, {:.1})",
            o.unit, o.truth, o.top, o.score, o.verdict, o.top_misfit, o.truth_misfit
        );
    }
    s
}

/// A real unit's circuit as the recipe (tests/reference/field_population.py) draws it, apart
/// from its file: what the meters never see.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RealCircuit {
    pub crest: f64,
    /// Both windings' resistance over the file's (cold) value.
    pub winding_factor: f64,
    /// In series with the whole secondary, henries (half in each half of a center tap).
    pub leakage_h: f64,
    /// The measured rail's capacitor over its label (before a fault).
    pub cap_factor: f64,
    /// The other capacitor's (a CRC's second, a doubler's lower, a split rail's - rail).
    pub cap2_factor: Option<f64>,
    pub load_factor: f64,
    /// The junctions' saturation current over the silicon preset's.
    pub is_factor: f64,
    /// The true mains, volts RMS.
    pub mains_vrms: f64,
    /// The fault's factor (capacitance, load, mains) or ESR in ohms; None without one.
    pub fault_param: Option<f64>,
}

/// The silicon preset's junction, as the recipe and the engine both have it (domain notes:
/// near a generic 1 A rectifier's simulator model, memory).
const SILICON: (f64, f64, f64) = (7.0e-9, 1.8, 0.034);

/// Solves a real unit with railcheck's engine: `stated` is its supply's file with the winding
/// stated, `condition` the unit's (`healthy` or a fault key of the recipe, or one of the
/// diagnosis's other faults `secondary-low`, `load-light` with `fault_param` its factor).
/// The engine models a split rail's two rails as matched, so a fault on the measured rail
/// alone (a heavy load, say) is solved as if on both.
pub fn solve_real(
    stated: &Supply,
    condition: &str,
    real: &RealCircuit,
) -> Result<railcheck::circuit::Figures, String> {
    use railcheck::circuit::{Conditions, LoadOverride, solve};
    use railcheck::supply::DiodeSpec;
    let mut s = stated.clone();
    s.transformer.leakage_mh = Some(real.leakage_h * 1e3);
    let (is_a, n, rs_ohms) = SILICON;
    s.rectifier.diode = DiodeSpec::Junction {
        is_a: is_a * real.is_factor,
        n,
        rs_ohms,
    };
    // Every capacitor at the other's factor, the measured rail's at its own (and the fault's).
    let others = real.cap2_factor.unwrap_or(real.cap_factor);
    let size = real.fault_param.unwrap_or(1.0);
    let heavy = match condition {
        "load-heavy" | "load-light" => size,
        _ => 1.0,
    };
    let load = match (s.load.amps, s.load.ohms) {
        (Some(a), _) => LoadOverride::Amps(a * real.load_factor * heavy),
        (None, Some(r)) => LoadOverride::Ohms(r * real.load_factor / heavy),
        (None, None) => return Err(format!("{}: no amps or ohms load", s.name)),
    };
    let mut cond = Conditions {
        mains_factor: real.mains_vrms / s.mains.vrms,
        crest: Some(real.crest),
        winding_factor: real.winding_factor,
        cap_factor: others,
        reservoir_factor: real.cap_factor / others,
        load: Some(load),
        ..Conditions::default()
    };
    match condition {
        "capacitance-low" => cond.reservoir_factor *= size,
        "esr-high" => cond.esr_ohms = real.fault_param,
        "rectifier-leg-open" => cond.leg_open = true,
        "capacitor-open" => cond.capacitor_open = true,
        "secondary-low" => cond.ratio_factor = size,
        _ => {}
    }
    solve(&s, &cond)
        .map(|op| op.figures)
        .map_err(|e| format!("{}: {e}", s.name))
}
