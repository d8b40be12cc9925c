//! Issue 15: the electrolytic capacitor's expected life and loss figures, against worked
//! arithmetic of the makers' rule (life doubles for every 10 degC cooler, from the Arrhenius
//! law; common practice, the endurance test of IEC 60384-4 behind the rating) and of the
//! dissipation factor's definition.

use railcheck::Supply;
use railcheck::analysis::capacitor_life::{LifeRating, esr_from_tan_delta, frequency_factor, life};

fn rating(ripple_a: Option<f64>) -> LifeRating {
    LifeRating {
        rated_h: 2000.0,
        rated_c: 105.0,
        ripple_a,
        ripple_hz: 120.0,
        rise_c: 5.0,
    }
}

/// Worked example (arithmetic of the rule): a 2,000 h / 105 degC part at 65 degC with no
/// ripple heating lasts 2,000 x 2^4 = 32,000 h; every 10 degC cooler doubles it.
#[test]
fn a_2000_h_105_degc_part_at_65_degc_lasts_32000_h_and_doubles_per_10_degc() {
    let l = life(&rating(None), 65.0, 0.0, 120.0, 24.0);
    assert!((l.hours - 32_000.0).abs() < 1e-6, "{}", l.hours);
    assert!((l.years - 32_000.0 / (24.0 * 365.25)).abs() < 1e-9);
    for t in [20.0, 45.0, 85.0, 105.0, 115.0] {
        let a = life(&rating(None), t, 0.0, 120.0, 24.0).hours;
        let b = life(&rating(None), t - 10.0, 0.0, 120.0, 24.0).hours;
        assert!((b / a - 2.0).abs() < 1e-12, "{t}: {a} -> {b}");
    }
    // At the rated temperature, the rated life; 8 hours a day stretch it three times in years.
    let at_rating = life(&rating(None), 105.0, 0.0, 120.0, 8.0);
    assert!((at_rating.hours - 2000.0).abs() < 1e-9);
    assert!((at_rating.years - 2000.0 / (8.0 * 365.25)).abs() < 1e-12);
}

/// Self-heating by hand: 5 degC at the rated 1.0 A (120 Hz); 1.5 A at 120 Hz heats the core
/// 5 x 1.5^2 = 11.25 degC, so at 40 degC ambient it runs at 51.25 degC and lasts
/// 2,000 x 2^((105 - 51.25) / 10) = 2,000 x 2^5.375 = 82,997 h (2^0.375 = 1.29684).
#[test]
fn ripple_heating_matches_a_hand_computed_case() {
    let l = life(&rating(Some(1.0)), 40.0, 1.5, 120.0, 24.0);
    assert!((l.rise_c - 11.25).abs() < 1e-12, "{}", l.rise_c);
    assert!((l.core_c - 51.25).abs() < 1e-12);
    let want = 2000.0 * 32.0 * 1.296_839_554_651_009_7;
    assert!(
        (l.hours - want).abs() < 1e-6 * want,
        "{} vs {want}",
        l.hours
    );
    // The same current at 10 kHz heats less: the part takes more ripple there (a
    // catalogue's frequency multiplier, typical values from memory).
    let hf = life(&rating(Some(1.0)), 40.0, 1.5, 10_000.0, 24.0);
    assert!(hf.rise_c < l.rise_c);
    assert!((hf.rise_c - 11.25 / frequency_factor(10_000.0, 120.0).powi(2)).abs() < 1e-12);
}

/// ESR from the dissipation factor (arithmetic of its definition, ESR = tan delta / (w C)):
/// 0.15 on 470 uF at 120 Hz is 0.15 / (2 pi x 120 x 470e-6) = 0.4233 ohm.
#[test]
fn esr_from_tan_delta_is_0_42_ohm_for_0_15_on_470_uf_at_120_hz() {
    let esr = esr_from_tan_delta(0.15, 120.0, 470.0);
    assert!((esr - 0.423_283).abs() < 1e-5, "{esr}");
}

fn bench_supply(filter_extra: &str) -> Supply {
    let text = format!(
        "format = 1\nname = \"t\"\n[mains]\nvrms = 230.0\nhz = 50.0\n[transformer]\n\
         ratio = 12.0\nsecondary_ohms = 0.5\n[rectifier]\ntopology = \"bridge\"\n\
         [filter]\nkind = \"capacitor\"\nuf = 2200.0\nrated_v = 35.0\n{filter_extra}\n\
         [load]\namps = 1.5\n"
    );
    Supply::from_toml_str(&text).unwrap_or_else(|e| panic!("{e}\n{text}"))
}

/// The report's life: the nominal at the stated ambient and the solved ripple current, the
/// worst at the warmest ambient and the worst case's largest ripple current; in the text and
/// the JSON (`capacitor_life`); none without a life rating.
#[test]
fn the_report_gives_the_life_at_nominal_and_at_the_worst_corner() {
    let s = bench_supply(
        "esr_ohms = 0.05\nrated_ripple_a = 2.0\nrated_life_h = 2000.0\nrated_life_c = 105.0\n\
         duty_h_per_day = 8.0",
    );
    let r = railcheck::report::build_default(s, "t").unwrap();
    let l = r.capacitor_life.as_ref().expect("a life");
    // The ripple current is the solve's; the core's rise follows the law by hand.
    let i = r.nominal.figures.cap_ripple_rms_a;
    let f = frequency_factor(r.nominal.figures.ripple_hz, 120.0);
    assert!((l.nominal.rise_c - 5.0 * (i / (f * 2.0)).powi(2)).abs() < 1e-9);
    assert_eq!(l.nominal.ambient_c, 40.0);
    assert_eq!(l.worst.ambient_c, 55.0);
    assert!(l.worst.hours < l.nominal.hours);
    assert!(l.assumed.iter().any(|a| a.contains("ambient not stated")));
    assert!(r.text().contains("Capacitor life"));
    let json = r.json();
    assert_eq!(
        json["capacitor_life"]["nominal"]["hours"].as_f64(),
        Some(l.nominal.hours)
    );
    // A stated ambient replaces the assumed range.
    let s = bench_supply(
        "esr_ohms = 0.05\nrated_ripple_a = 2.0\nrated_life_h = 2000.0\nrated_life_c = 105.0\n\
         ambient_c = 50.0",
    );
    let r = railcheck::report::build_default(s, "t").unwrap();
    let l = r.capacitor_life.unwrap();
    assert_eq!((l.nominal.ambient_c, l.worst.ambient_c), (50.0, 50.0));
    let r = railcheck::report::build_default(bench_supply("esr_ohms = 0.05"), "t").unwrap();
    assert!(r.capacitor_life.is_none());
    assert!(r.json()["capacitor_life"].is_null());
}

/// tan delta stands for the ESR when esr_ohms is left out, and the two together are refused
/// naming the key; half a life rating is refused naming the missing half.
#[test]
fn tan_delta_gives_the_esr_and_bad_combinations_are_refused() {
    let s = bench_supply("tan_delta = 0.15");
    let want = esr_from_tan_delta(0.15, 120.0, 2200.0);
    assert!((s.filter.esr() - want).abs() < 1e-12);
    let e = Supply::from_toml_str(&toml_text("esr_ohms = 0.05\ntan_delta = 0.15"))
        .unwrap_err()
        .to_string();
    assert!(e.contains("filter.tan_delta"), "{e}");
    let e = Supply::from_toml_str(&toml_text("rated_life_h = 2000.0"))
        .unwrap_err()
        .to_string();
    assert!(e.contains("filter.rated_life_c"), "{e}");
    let e = Supply::from_toml_str(&toml_text("duty_h_per_day = 30.0"))
        .unwrap_err()
        .to_string();
    assert!(
        e.contains("filter.duty_h_per_day") && e.contains("24"),
        "{e}"
    );
}

fn toml_text(filter_extra: &str) -> String {
    format!(
        "format = 1\nname = \"t\"\n[mains]\nvrms = 230.0\nhz = 50.0\n[transformer]\n\
         ratio = 12.0\nsecondary_ohms = 0.5\n[rectifier]\ntopology = \"bridge\"\n\
         [filter]\nkind = \"capacitor\"\nuf = 2200.0\n{filter_extra}\n[load]\namps = 1.5\n"
    )
}

/// The replacement grades at the unit's duty: a 105 degC part outlives an 85 degC one of the
/// same hours by 2^2 (the rule: 20 degC), and at the same grade a higher ripple rating heats
/// less and lives longer.
#[test]
fn a_105_degc_part_outlives_an_85_degc_part_and_more_ripple_rating_helps() {
    use railcheck::analysis::capacitor_life::rank_grades;
    let s = bench_supply("esr_ohms = 0.05\nrated_ripple_a = 1.0\nambient_c = 45.0");
    let ranked = rank_grades(&s, 1.2, 1.2, 100.0);
    let find = |c: f64, h: f64, ripple: f64| {
        ranked
            .iter()
            .find(|g| g.rated_c == c && g.rated_h == h && g.ripple_a == Some(ripple))
            .unwrap_or_else(|| panic!("{c} {h} {ripple}"))
    };
    let cool = find(85.0, 2000.0, 1.0);
    let warm = find(105.0, 2000.0, 1.0);
    assert!((warm.worst.hours / cool.worst.hours - 4.0).abs() < 1e-9);
    let more_ripple = find(105.0, 10_000.0, 1.5);
    let plain = find(105.0, 10_000.0, 1.0);
    assert!(more_ripple.worst.rise_c < plain.worst.rise_c);
    assert!(more_ripple.worst.hours > plain.worst.hours);
    // Longest-lived first.
    assert!(
        ranked
            .windows(2)
            .all(|w| w[0].worst.hours >= w[1].worst.hours)
    );
    assert_eq!(ranked.last().unwrap().rated_c, 85.0);
}

/// The storage advice (common practice, from memory) by the gap since the visit before:
/// nothing under a year, then gentler to firmer; and the measured drift against the rule.
#[test]
fn storage_advice_follows_the_gap_and_fast_ageing_is_named() {
    use railcheck::analysis::capacitor_life::{ageing_check, reforming_advice, storage_caution};
    assert!(reforming_advice(300).is_none());
    assert!(reforming_advice(500).unwrap().contains("no load"));
    assert!(reforming_advice(900).unwrap().contains("slowly"));
    assert!(reforming_advice(1500).unwrap().contains("reform"));
    let mut s = bench_supply("esr_ohms = 0.05");
    s.visits = Supply::from_toml_str(&format!(
        "{}\n[[visit]]\ndate = 2020-01-10\ndc_v = 30.0\n",
        toml_text("esr_ohms = 0.05")
    ))
    .unwrap()
    .visits;
    let day = |y, m, d| railcheck::visit::days_from_civil(y, m, d);
    assert!(storage_caution(&s, day(2020, 6, 1)).is_none());
    let c = storage_caution(&s, day(2023, 6, 1)).expect("a caution after 3.4 years");
    assert!(c.contains("3.4 years") && c.contains("reform"), "{c}");
    // Measured drift against the rule: a part reaching its limit in a fifth of the rule's
    // time is called out; within a factor of two they agree.
    let rule = life(&rating(None), 65.0, 0.0, 120.0, 24.0);
    assert!(
        ageing_check(rule.years / 5.0, &rule)
            .words
            .contains("faster")
    );
    assert!(
        ageing_check(rule.years * 0.8, &rule)
            .words
            .contains("agree")
    );
}

/// The demo dosing controller (invented data: its capacitor dries out over three visits, a
/// 2,000 h / 105 degC part at 35 degC): the trend puts its measured life against the rule's.
#[test]
fn the_demo_trend_compares_its_drift_with_the_rule() {
    let s = Supply::from_toml_str(&railcheck::library::demo::supplies()[1].1).unwrap();
    let t = railcheck::diagnose::trend::trend(&s);
    let a = t.ageing.expect("a comparison");
    // At the fitted drift, 20 % of 1000 uF is lost in (1000 - 800) / |drift| years.
    let want = 200.0 / -t.uf_per_year.unwrap();
    assert!((a.measured_years - want).abs() < 1e-9 * want);
    assert!(a.words.contains("faster"), "{}", a.words);
}

/// The service record carries the storage advice of a visit that follows a long gap (the demo
/// chart recorder: four years between its visits, invented data), and the life when rated.
#[test]
fn the_record_carries_the_storage_advice_and_the_life() {
    let demo = railcheck::library::demo::supplies();
    let find = |name: &str| {
        demo.iter()
            .map(|(_, text)| Supply::from_toml_str(text).unwrap())
            .find(|s| s.name == name)
            .unwrap()
    };
    let recorder = find("Flow chart recorder, HT rail");
    let newest = recorder.visits.iter().max_by_key(|v| v.days()).unwrap();
    let html = railcheck::record::of_visit(&recorder, newest, "recorder.toml").unwrap();
    assert!(
        html.contains("STORAGE:") && html.contains("reform"),
        "no storage advice"
    );
    let pump = find("Pump-house 2, relay rail");
    let newest = pump.visits.iter().max_by_key(|v| v.days()).unwrap();
    let html = railcheck::record::of_visit(&pump, newest, "pump.toml").unwrap();
    assert!(html.contains("Expected capacitor life"));
    assert!(
        !html.contains("STORAGE:"),
        "yearly visits need no storage advice"
    );
}

/// The end-of-life criteria in the part's values (makers' usual: capacitance 20 % under its
/// label, ESR twice its first): 2200 uF and 0.05 ohm give 1760 uF and 0.1 ohm.
#[test]
fn the_end_of_life_criteria_are_in_the_parts_own_values() {
    let s = bench_supply("esr_ohms = 0.05\nrated_life_h = 2000.0\nrated_life_c = 105.0");
    let r = railcheck::report::build_default(s, "t").unwrap();
    let l = r.capacitor_life.unwrap();
    assert!((l.end_of_life_uf - 1760.0).abs() < 1e-9);
    assert!((l.end_of_life_esr_ohms.unwrap() - 0.1).abs() < 1e-12);
    assert!(
        l.end_of_life_words().contains("1760 uF"),
        "{}",
        l.end_of_life_words()
    );
}
