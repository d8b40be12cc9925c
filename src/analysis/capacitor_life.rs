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
}

impl CapacitorLife {
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

/// Years as a technician says them: "3.4 years", "over 50 years".
pub fn years_words(years: f64) -> String {
    if years > 50.0 {
        "over 50 years".into()
    } else if years >= 10.0 {
        format!("{years:.0} years")
    } else {
        format!("{years:.1} years")
    }
}

/// The first capacitor's expected life (see [`CapacitorLife`]); None when the file gives no
/// life rating or no capacitor. `nominal` is the supply's nominal solve, `worst` its worst
/// case.
pub fn capacitor_life(
    supply: &crate::supply::Supply,
    nominal: &crate::circuit::Figures,
    worst: &super::worst_case::WorstCase,
) -> Option<CapacitorLife> {
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
    let (ambient, ambient_high) = match f.ambient_c {
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
    let duty = f.duty_h_per_day.unwrap_or_else(|| {
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
    let nominal_life = life(
        &rating,
        ambient,
        nominal.cap_ripple_rms_a,
        nominal.ripple_hz,
        duty,
    );
    let (worst_at, worst_fig) = worst
        .solved
        .iter()
        .max_by(|a, b| a.1.cap_ripple_rms_a.total_cmp(&b.1.cap_ripple_rms_a))
        .map(|(w, f)| (w.clone(), f))
        .unwrap_or(("nominal".into(), nominal));
    let worst_life = life(
        &rating,
        ambient_high,
        worst_fig.cap_ripple_rms_a,
        worst_fig.ripple_hz,
        duty,
    );
    Some(CapacitorLife {
        rating,
        duty_h_per_day: duty,
        nominal: nominal_life,
        worst: worst_life,
        worst_at,
        assumed,
    })
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
