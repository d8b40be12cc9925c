//! An electrolytic capacitor's expected life: the makers' rule that life doubles for every
//! 10 degC cooler (from the Arrhenius law of the electrolyte's loss; the endurance test it
//! rests on is IEC 60384-4's), the core's temperature the ambient plus its own heating by the
//! ripple current. Also the loss figures: ESR from a data sheet's dissipation factor, and the
//! end-of-life criteria.

use serde::Serialize;

/// The internal temperature rise at the rated ripple current, degC, when the file states
/// none: makers rate their ripple currents for a core a few degrees above the can's
/// surroundings, commonly 5 degC at 105 degC parts (common practice, from memory).
pub const DEFAULT_RISE_C: f64 = 5.0;

/// The ambient around the capacitor when the file states none, degC: inside equipment,
/// nominally 40 and up to 55 at its warmest (common practice, from memory; a reading of the
/// can's temperature replaces both).
pub const ASSUMED_AMBIENT_C: (f64, f64) = (40.0, 55.0);

/// The hours a day the unit runs when the file states none: always on.
pub const DEFAULT_DUTY_H_PER_DAY: f64 = 24.0;

/// The frequency a ripple-current rating is given at when the file states none, hertz (the
/// usual catalogue frequency, 120 Hz; some catalogues use 100 Hz).
pub const DEFAULT_RATING_HZ: f64 = 120.0;

/// End of life by capacitance: this share below the stated value (makers' usual criterion,
/// the limit of the endurance test's capacitance change).
pub const END_OF_LIFE_CAP_DROP: f64 = 0.20;
/// End of life by loss: the ESR (or tan delta) this many times its initial value.
pub const END_OF_LIFE_ESR_FACTOR: f64 = 2.0;

/// Ripple-current multipliers against frequency, as catalogues give them for aluminium
/// electrolytics of a few tens to a few hundred volts, relative to 120 Hz (typical values from
/// memory; a part's own table differs by some tenths): (hertz, multiplier).
const FREQUENCY_FACTORS: [(f64, f64); 7] = [
    (50.0, 0.80),
    (60.0, 0.82),
    (120.0, 1.00),
    (300.0, 1.10),
    (1_000.0, 1.25),
    (10_000.0, 1.40),
    (100_000.0, 1.45),
];

/// The ripple-current multiplier at `hz` against the rating at `rating_hz` (a capacitor takes
/// more ripple current at higher frequencies, its ESR being lower there): interpolated on
/// the logarithm of the frequency, held beyond the table's ends.
pub fn frequency_factor(hz: f64, rating_hz: f64) -> f64 {
    table_factor(hz) / table_factor(rating_hz)
}

fn table_factor(hz: f64) -> f64 {
    let t = &FREQUENCY_FACTORS;
    // A NaN or a frequency below the table's first takes its first value.
    if hz.is_nan() || hz <= t[0].0 {
        return t[0].1;
    }
    for w in t.windows(2) {
        let ((f0, m0), (f1, m1)) = (w[0], w[1]);
        if hz <= f1 {
            let s = (hz.ln() - f0.ln()) / (f1.ln() - f0.ln());
            return m0 + (m1 - m0) * s;
        }
    }
    t[t.len() - 1].1
}

/// ESR from a data sheet's dissipation factor: tan delta / (2 pi f C), ohms, with `uf` in
/// microfarads at `hz` hertz.
pub fn esr_from_tan_delta(tan_delta: f64, hz: f64, uf: f64) -> f64 {
    tan_delta / (std::f64::consts::TAU * hz * uf * 1e-6)
}

/// What the life rule needs, from the file and the solve.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct LifeRating {
    /// The rated life at the rated temperature, hours and degC ("2,000 h at 105 degC").
    pub rated_h: f64,
    pub rated_c: f64,
    /// The rated ripple current (RMS amps) and the frequency it is rated at (hertz); None
    /// leaves the ripple's own heating out.
    pub ripple_a: Option<f64>,
    pub ripple_hz: f64,
    /// The core's rise above its surroundings at the rated ripple current, degC.
    pub rise_c: f64,
}

/// The expected life at one operating point.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Life {
    /// The surroundings taken, and the core's own rise by its ripple current, degC.
    pub ambient_c: f64,
    pub rise_c: f64,
    /// The core's temperature, degC.
    pub core_c: f64,
    /// Hours of service, and years at the duty's hours a day.
    pub hours: f64,
    pub years: f64,
}

/// The life at `ambient_c` with `ripple_a` RMS amps through the capacitor at `ripple_hz`,
/// running `duty_h_per_day` hours a day: the core at the ambient plus rise x (I / (F
/// I_rated))^2, then the rated life doubled for every 10 degC the core runs below the rated
/// temperature (halved for every 10 above).
pub fn life(
    rating: &LifeRating,
    ambient_c: f64,
    ripple_a: f64,
    ripple_hz: f64,
    duty_h_per_day: f64,
) -> Life {
    let rise_c = match rating.ripple_a {
        Some(rated) if rated > 0.0 => {
            let allowed = frequency_factor(ripple_hz, rating.ripple_hz) * rated;
            rating.rise_c * (ripple_a / allowed).powi(2)
        }
        _ => 0.0,
    };
    let core_c = ambient_c + rise_c;
    let hours = rating.rated_h * 2f64.powf((rating.rated_c - core_c) / 10.0);
    Life {
        ambient_c,
        rise_c,
        core_c,
        hours,
        years: hours / (duty_h_per_day.max(1e-6) * 365.25),
    }
}

/// The first capacitor's expected life over the supply's tolerances: at nominal (the
/// ambient's nominal, the nominal ripple current) and at the worst corner (the warmest
/// ambient, the largest ripple current of the worst case's points).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CapacitorLife {
    pub rating: LifeRating,
    pub duty_h_per_day: f64,
    pub nominal: Life,
    pub worst: Life,
    /// The worst-case point the largest ripple current came from.
    pub worst_at: String,
    /// What the file left out and was taken instead.
    pub assumed: Vec<String>,
    /// The end-of-life criteria in the part's own values: capacitance at or below this
    /// (microfarads, 20 % under its label), or ESR at or above this (ohms, twice its first;
    /// None when the file gives no ESR).
    pub end_of_life_uf: f64,
    pub end_of_life_esr_ohms: Option<f64>,
}

impl CapacitorLife {
    /// The end-of-life criteria in words: "end of life below 1760 uF or above 0.10 ohm ESR".
    pub fn end_of_life_words(&self) -> String {
        let mut out = format!(
            "end of life: below {} (20 % under its label)",
            crate::units::format_uf(self.end_of_life_uf)
        );
        if let Some(esr) = self.end_of_life_esr_ohms {
            out.push_str(&format!(
                " or ESR above {} ohm (twice its first)",
                crate::units::format_number((esr * 1000.0).round() / 1000.0)
            ));
        }
        out
    }

    /// One line for the report and the screen.
    pub fn words(&self) -> String {
        format!(
            "{} h at {:.0} degC rated: {:.0} h, {} at {} h a day (core {:.0} degC, {:.0} \
             ambient + {:.1} ripple); worst {:.0} h, {} (core {:.0} degC)",
            crate::units::format_number(self.rating.rated_h),
            self.rating.rated_c,
            self.nominal.hours,
            years_words(self.nominal.years),
            crate::units::format_number(self.duty_h_per_day),
            self.nominal.core_c,
            self.nominal.ambient_c,
            self.nominal.rise_c,
            self.worst.hours,
            years_words(self.worst.years),
            self.worst.core_c,
        )
    }
}

/// Beyond this many years the rule's figure is not quoted: makers trust the doubling rule to
/// about 15 years, past which the seal and the electrolyte's slow loss rule instead (common
/// practice, from memory).
pub const TRUSTED_YEARS: f64 = 15.0;

/// Years as a technician says them: "3.4 years", "12 years", "over 15 years".
pub fn years_words(years: f64) -> String {
    if years > TRUSTED_YEARS {
        format!("over {TRUSTED_YEARS:.0} years")
    } else if years >= 10.0 {
        format!("{years:.0} years")
    } else {
        format!("{years:.1} years")
    }
}

/// What the file says of the first capacitor's life and duty, and what was taken for what it
/// leaves out; None without a life rating or a capacitor.
struct Inputs {
    rating: LifeRating,
    ambient_c: f64,
    ambient_high_c: f64,
    duty_h_per_day: f64,
    assumed: Vec<String>,
}

fn inputs(supply: &crate::supply::Supply) -> Option<Inputs> {
    let f = &supply.filter;
    if !f.kind.has_capacitor() {
        return None;
    }
    let rating = LifeRating {
        rated_h: f.rated_life_h?,
        rated_c: f.rated_life_c?,
        ripple_a: f.rated_ripple_a,
        ripple_hz: f.rated_ripple_hz.unwrap_or(DEFAULT_RATING_HZ),
        rise_c: f.rise_c.unwrap_or(DEFAULT_RISE_C),
    };
    let mut assumed = Vec::new();
    let (ambient_c, ambient_high_c) = match f.ambient_c {
        Some(a) => (a, a),
        None => {
            let (a, hi) = ASSUMED_AMBIENT_C;
            assumed.push(format!(
                "ambient not stated: {a:.0} degC taken, {hi:.0} degC at worst (inside \
                 equipment; state filter.ambient_c, or the can's measured temperature)"
            ));
            (a, hi)
        }
    };
    let duty_h_per_day = f.duty_h_per_day.unwrap_or_else(|| {
        assumed.push("duty not stated: 24 hours a day taken (always on)".into());
        DEFAULT_DUTY_H_PER_DAY
    });
    if f.rated_ripple_a.is_none() {
        assumed.push(
            "no rated ripple current (filter.rated_ripple_a): the ripple's own heating is \
             left out, so the life is an upper bound"
                .into(),
        );
    }
    if f.rise_c.is_none() && f.rated_ripple_a.is_some() {
        assumed.push(format!(
            "core rise at the rated ripple not stated: {DEFAULT_RISE_C:.0} degC taken (makers' \
             usual figure)"
        ));
    }
    Some(Inputs {
        rating,
        ambient_c,
        ambient_high_c,
        duty_h_per_day,
        assumed,
    })
}

/// Whether the file gives the first capacitor's life rating (and has one to rate).
pub fn is_rated(supply: &crate::supply::Supply) -> bool {
    let f = &supply.filter;
    f.kind.has_capacitor() && f.rated_life_h.is_some() && f.rated_life_c.is_some()
}

/// The first capacitor's life at the supply's nominal (`nominal`, its nominal solve): the
/// ambient's nominal and the nominal ripple current; None without a life rating.
pub fn nominal_life(
    supply: &crate::supply::Supply,
    nominal: &crate::circuit::Figures,
) -> Option<Life> {
    let i = inputs(supply)?;
    Some(life(
        &i.rating,
        i.ambient_c,
        nominal.cap_ripple_rms_a,
        nominal.ripple_hz,
        i.duty_h_per_day,
    ))
}

/// The first capacitor's expected life (see [`CapacitorLife`]); None when the file gives no
/// life rating or no capacitor. `nominal` is the supply's nominal solve, `worst` its worst
/// case.
pub fn capacitor_life(
    supply: &crate::supply::Supply,
    nominal: &crate::circuit::Figures,
    worst: &super::worst_case::WorstCase,
) -> Option<CapacitorLife> {
    let i = inputs(supply)?;
    let (worst_at, worst_fig) = worst
        .solved
        .iter()
        .max_by(|a, b| a.1.cap_ripple_rms_a.total_cmp(&b.1.cap_ripple_rms_a))
        .map(|(w, f)| (w.clone(), f))
        .unwrap_or(("nominal".into(), nominal));
    let worst_life = life(
        &i.rating,
        i.ambient_high_c,
        worst_fig.cap_ripple_rms_a,
        worst_fig.ripple_hz,
        i.duty_h_per_day,
    );
    let nominal_life = life(
        &i.rating,
        i.ambient_c,
        nominal.cap_ripple_rms_a,
        nominal.ripple_hz,
        i.duty_h_per_day,
    );
    let f = &supply.filter;
    let esr = f.esr();
    Some(CapacitorLife {
        end_of_life_uf: f.uf.unwrap_or(0.0) * (1.0 - END_OF_LIFE_CAP_DROP),
        end_of_life_esr_ohms: (esr > 0.0).then_some(esr * END_OF_LIFE_ESR_FACTOR),
        nominal: nominal_life,
        rating: i.rating,
        duty_h_per_day: i.duty_h_per_day,
        worst: worst_life,
        worst_at,
        assumed: i.assumed,
    })
}

/// The usual grades of aluminium electrolytic on a supplier's shelf, as (rated degC, rated
/// hours, ripple rating against the file's part): the general-purpose 85 degC part, 105 degC
/// parts of 2,000 to 10,000 hours, and a low-impedance 105 degC part taking half as much ripple
/// again (typical catalogue grades from memory, not any one maker's).
pub const GRADES: [(f64, f64, f64); 5] = [
    (85.0, 2_000.0, 1.0),
    (105.0, 2_000.0, 1.0),
    (105.0, 5_000.0, 1.0),
    (105.0, 10_000.0, 1.0),
    (105.0, 10_000.0, 1.5),
];

/// A replacement grade and its expected life at the unit's duty.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct GradeLife {
    pub rated_c: f64,
    pub rated_h: f64,
    /// Its ripple rating, amps RMS (None when the file gives no rating to scale).
    pub ripple_a: Option<f64>,
    /// At the nominal ambient and ripple, and at the warmest ambient with the worst ripple.
    pub nominal: Life,
    pub worst: Life,
}

/// Each of [`GRADES`] at the unit's duty, the longest-lived first: the nominal ripple current
/// `ripple_a` at `ripple_hz`, and `worst_ripple_a` at the warmest ambient. Each grade's ripple
/// rating is the file's part's scaled by the grade's factor (none when the file states none:
/// the ripple heating is then left out alike for all, and said so by the caller).
pub fn rank_grades(
    supply: &crate::supply::Supply,
    ripple_a: f64,
    worst_ripple_a: f64,
    ripple_hz: f64,
) -> Vec<GradeLife> {
    let f = &supply.filter;
    let (ambient, ambient_high) = f.ambient_c.map_or(ASSUMED_AMBIENT_C, |a| (a, a));
    let duty = f.duty_h_per_day.unwrap_or(DEFAULT_DUTY_H_PER_DAY);
    let mut out: Vec<GradeLife> = GRADES
        .iter()
        .map(|&(rated_c, rated_h, ripple_factor)| {
            let rating = LifeRating {
                rated_h,
                rated_c,
                ripple_a: f.rated_ripple_a.map(|a| a * ripple_factor),
                ripple_hz: f.rated_ripple_hz.unwrap_or(DEFAULT_RATING_HZ),
                rise_c: f.rise_c.unwrap_or(DEFAULT_RISE_C),
            };
            GradeLife {
                rated_c,
                rated_h,
                ripple_a: rating.ripple_a,
                nominal: life(&rating, ambient, ripple_a, ripple_hz, duty),
                worst: life(&rating, ambient_high, worst_ripple_a, ripple_hz, duty),
            }
        })
        .collect();
    out.sort_by(|a, b| b.worst.hours.total_cmp(&a.worst.hours));
    out
}

/// The field advice for an electrolytic that has sat unpowered for `days`, or None under a
/// year: its oxide thins without voltage, and full voltage at once can pass a large leakage
/// current that heats and vents it. The bands are common practice from memory (drive makers
/// publish reforming procedures by storage time in the same spirit; their own figures for
/// their units take precedence).
pub fn reforming_advice(days: i64) -> Option<&'static str> {
    let years = days as f64 / 365.25;
    if years < 1.0 {
        None
    } else if years < 2.0 {
        Some(
            "run it at no load for an hour before loading it, and watch for heat or hum from \
             the capacitors",
        )
    } else if years < 3.0 {
        Some(
            "bring the voltage up slowly, over 30 to 60 minutes (a variac, or a series lamp or \
             resistor that limits the current), before loading it",
        )
    } else {
        Some(
            "reform the capacitors before full voltage: raise it in steps over several hours \
             with the current limited, watching the leakage current fall; one that stays warm \
             or keeps leaking is replaced",
        )
    }
}

/// A gap between visits this long (days) earns the storage caution: yearly rounds that slip a
/// few months are routine, and a unit visited that often is seldom one left unpowered.
pub const LONG_GAP_DAYS: i64 = 2 * 365;

/// The storage caution for a visit on day `on` (days since 1970) after the supply's visit
/// before it: when two years or more lie between, what to do if the unit sat unpowered over
/// that gap; None otherwise or with no visit before.
pub fn storage_caution(supply: &crate::supply::Supply, on: i64) -> Option<String> {
    let before = supply
        .visits
        .iter()
        .filter_map(|v| v.days())
        .filter(|&d| d < on)
        .max()?;
    let gap = on - before;
    if gap < LONG_GAP_DAYS {
        return None;
    }
    let advice = reforming_advice(gap)?;
    Some(format!(
        "{:.1} years since the visit before; if it sat unpowered: {advice}",
        gap as f64 / 365.25
    ))
}

/// How the capacitor's measured drift compares with the temperature rule.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AgeingCheck {
    /// Years the measured drift takes from the label's capacitance to the end-of-life limit.
    pub measured_years: f64,
    /// The rule's life at nominal, years at the duty.
    pub rule_years: f64,
    pub words: String,
}

/// Compares the measured time to end of life (`measured_years`) with the rule's (`rule`):
/// within a factor of two they agree; a part ageing more than twice as fast as its
/// temperature explains points at heat or ripple beyond what the file says.
pub fn ageing_check(measured_years: f64, rule: &Life) -> AgeingCheck {
    let ratio = measured_years / rule.years.max(1e-9);
    let words = if ratio < 0.5 {
        format!(
            "ageing faster than its temperature explains: at the measured drift it goes from \
             its label to its limit in {}, the temperature rule gives {} (core {:.0} degC): look for \
             overheating (a hot neighbour, blocked airflow, a can warmer than the ambient taken) \
             or ripple beyond its rating",
            years_words(measured_years),
            years_words(rule.years),
            rule.core_c
        )
    } else if ratio > 2.0 {
        format!(
            "ageing slower than the temperature rule: {} by the drift against {} by the rule \
             (the rule is the makers' conservative one, or it runs cooler than taken)",
            years_words(measured_years),
            years_words(rule.years)
        )
    } else {
        format!(
            "the drift and the temperature rule agree: {} against {}",
            years_words(measured_years),
            years_words(rule.years)
        )
    };
    AgeingCheck {
        measured_years,
        rule_years: rule.years,
        words,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn rating(ripple_a: Option<f64>) -> LifeRating {
        LifeRating {
            rated_h: 2000.0,
            rated_c: 105.0,
            ripple_a,
            ripple_hz: 120.0,
            rise_c: 5.0,
        }
    }

    #[test]
    fn the_factor_is_one_at_the_rating_frequency_and_grows_with_frequency() {
        assert!((frequency_factor(120.0, 120.0) - 1.0).abs() < 1e-12);
        assert!(frequency_factor(100.0, 120.0) < 1.0);
        assert!(frequency_factor(10_000.0, 120.0) > frequency_factor(1_000.0, 120.0));
        assert!((frequency_factor(1e6, 120.0) - 1.45).abs() < 1e-12);
        assert!((frequency_factor(1.0, 120.0) - 0.80).abs() < 1e-12);
    }

    #[test]
    fn no_ripple_rating_leaves_the_self_heating_out() {
        let l = life(&rating(None), 65.0, 5.0, 100.0, 24.0);
        assert_eq!(l.rise_c, 0.0);
        assert!((l.hours - 32_000.0).abs() < 1e-6);
    }
}
