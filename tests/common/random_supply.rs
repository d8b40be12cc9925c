//! Random valid supply files over the whole range the validator accepts (src/supply.rs), with
//! a share of absurd-but-legal corners: values drawn log-uniformly across many decades, zero
//! resistances, ideal diodes, picofarad and farad capacitors, starved and idle loads.
//!
//! Shared by tests/time_bound.rs and examples/slowest.rs (included with `#[path]`), so that the
//! proptest and the 10,000-supply run draw from the same space. `u` yields numbers in [0, 1).

#![allow(dead_code)]

/// Log-uniform between `lo` and `hi` (both above zero).
pub fn log_between(u: &mut dyn FnMut() -> f64, lo: f64, hi: f64) -> f64 {
    (lo.ln() + u() * (hi.ln() - lo.ln())).exp()
}

/// A typical value most of the time, else anywhere in the legal range (log-uniform), else the
/// range's own ends: `p_wild` of the draws leave the typical band.
fn value(u: &mut dyn FnMut() -> f64, typical: (f64, f64), legal: (f64, f64), p_wild: f64) -> f64 {
    let r = u();
    if r < p_wild * 0.8 {
        log_between(u, legal.0, legal.1)
    } else if r < p_wild {
        if u() < 0.5 { legal.0 } else { legal.1 }
    } else {
        log_between(u, typical.0, typical.1)
    }
}

fn pick<'a>(u: &mut dyn FnMut() -> f64, options: &[&'a str]) -> &'a str {
    options[((u() * options.len() as f64) as usize).min(options.len() - 1)]
}

/// Zero with probability `p_zero`, else `value(...)`.
fn maybe_zero(
    u: &mut dyn FnMut() -> f64,
    p_zero: f64,
    typical: (f64, f64),
    legal: (f64, f64),
    p_wild: f64,
) -> f64 {
    if u() < p_zero {
        0.0
    } else {
        value(u, typical, legal, p_wild)
    }
}

/// One random supply file (TOML text) that the validator accepts; `p_wild` in 0..=1 sets how
/// often a value leaves its typical band for the rest of the legal range.
pub fn supply_text(u: &mut dyn FnMut() -> f64, p_wild: f64) -> String {
    let topology = pick(
        u,
        &["half-wave", "center-tap", "bridge", "doubler", "split-rail"],
    );
    let kind = if topology == "doubler" {
        pick(u, &["capacitor", "crc", "clc"])
    } else {
        pick(u, &["none", "capacitor", "crc", "lc", "clc"])
    };
    let vrms = value(u, (100.0, 250.0), (1.0, 1000.0), p_wild);
    let hz = if u() < 0.7 {
        pick(u, &["50.0", "60.0"]).parse().unwrap()
    } else {
        16.0 + u() * (500.0 - 16.0)
    };
    let crest = 1.1 + u() * (std::f64::consts::SQRT_2 - 1.1);
    let mut t = String::new();
    t += &format!(
        "format = 1\nname = \"random\"\n[mains]\nvrms = {vrms:e}\nhz = {hz}\ncrest = {crest}\n"
    );
    t += &format!("low_pct = {}\nhigh_pct = {}\n", u() * 50.0, u() * 50.0);
    t += "[transformer]\n";
    if u() < 0.7 {
        // The measured form: a ratio and resistances (the ratio keeps the secondary legal).
        let ratio = value(u, (1.0, 40.0), (0.01, 1e4), p_wild);
        t += &format!("ratio = {ratio:e}\n");
        t += &format!(
            "secondary_ohms = {:e}\n",
            maybe_zero(u, 0.1, (0.1, 10.0), (1e-6, 1e5), p_wild)
        );
        t += &format!(
            "primary_ohms = {:e}\n",
            maybe_zero(u, 0.3, (1.0, 50.0), (1e-6, 1e6), p_wild)
        );
    } else {
        // The nameplate form; the ratio it implies must stay within 0.01..10000.
        let primary = value(u, (100.0, 250.0), (1.0, 1e5), p_wild);
        let regulation = if u() < 0.2 {
            0.0
        } else {
            value(u, (3.0, 25.0), (0.01, 100.0), p_wild)
        };
        let ratio = value(u, (1.0, 40.0), (0.02, 5e3), p_wild);
        let secondary = primary / ratio / (1.0 + regulation / 100.0);
        if !(0.1..=1e5).contains(&secondary) {
            return supply_text(u, p_wild);
        }
        t += &format!("primary_vrms = {primary:e}\nsecondary_vrms = {secondary:e}\n");
        t += &format!("regulation_pct = {regulation}\n");
        t += &format!(
            "rated_va = {:e}\n",
            value(u, (5.0, 500.0), (0.1, 1e7), p_wild)
        );
    }
    if u() < 0.3 {
        t += &format!("ratio_pct = {}\n", u() * 20.0);
    }
    if u() < 0.3 {
        t += &format!(
            "leakage_mh = {:e}\n",
            maybe_zero(u, 0.1, (0.1, 50.0), (1e-6, 1e6), p_wild)
        );
    }
    t += &format!("[rectifier]\ntopology = \"{topology}\"\n");
    let d = u();
    if d < 0.6 {
        t += &format!(
            "diode = \"{}\"\n",
            pick(u, &["silicon", "fast", "schottky", "ideal"])
        );
    } else if d < 0.8 {
        t += &format!(
            "diode = {{ drop_v = {}, ohms = {:e} }}\n",
            1e-3 + u() * 10.0,
            maybe_zero(u, 0.3, (0.01, 1.0), (1e-6, 100.0), p_wild)
        );
    } else {
        t += &format!(
            "diode = {{ is_a = {:e}, n = {}, rs_ohms = {:e} }}\n",
            log_between(u, 1e-15, 1e-2),
            0.5 + u() * 4.5,
            maybe_zero(u, 0.2, (0.01, 0.5), (1e-6, 100.0), p_wild)
        );
    }
    if u() < 0.3 {
        t += &format!("temp_c = {}\n", -55.0 + u() * 230.0);
    }
    if u() < 0.3 {
        t += &format!("drop_spread_pct = {}\n", u() * 50.0);
    }
    t += &format!("[filter]\nkind = \"{kind}\"\n");
    if kind != "none" {
        t += &format!(
            "uf = {:e}\nesr_ohms = {:e}\n",
            value(u, (10.0, 20000.0), (1e-6, 1e7), p_wild),
            maybe_zero(u, 0.3, (0.01, 1.0), (1e-6, 1000.0), p_wild)
        );
        t += &format!("low_pct = {}\nhigh_pct = {}\n", u() * 90.0, u() * 200.0);
        if u() < 0.2 {
            t += &format!("aged_pct = {}\n", u() * 90.0);
        }
    }
    if kind == "crc" {
        t += &format!(
            "series_ohms = {:e}\nsecond_uf = {:e}\n",
            value(u, (10.0, 1000.0), (1e-3, 1e6), p_wild),
            value(u, (10.0, 20000.0), (1e-6, 1e7), p_wild)
        );
    }
    if kind == "clc" {
        t += &format!(
            "second_uf = {:e}\n",
            value(u, (10.0, 20000.0), (1e-6, 1e7), p_wild)
        );
    }
    if kind == "lc" || kind == "clc" {
        let henries = value(u, (0.005, 20.0), (1e-6, 1000.0), p_wild);
        t += &format!(
            "choke_h = {henries:e}\nchoke_ohms = {:e}\n",
            maybe_zero(u, 0.1, (0.1, 300.0), (1e-6, 1e5), p_wild)
        );
        if u() < 0.2 {
            // A swinging choke: more inductance at light current.
            t += &format!(
                "choke_light_h = {:e}\nchoke_rated_a = {:e}\n",
                (henries * (1.0 + 4.0 * u())).min(1000.0),
                value(u, (0.05, 5.0), (1e-4, 1e4), p_wild)
            );
        }
    }
    t += "[load]\n";
    if u() < 0.5 {
        let amps = if u() < 0.05 {
            0.0
        } else {
            value(u, (0.01, 2.0), (1e-9, 1e4), p_wild)
        };
        t += &format!("amps = {amps:e}\n");
        if u() < 0.3 {
            t += &format!(
                "min_amps = {:e}\nmax_amps = {:e}\n",
                (amps * u()).max(1e-9).min(amps),
                (amps * (1.0 + u())).min(1e4)
            );
        }
    } else {
        let ohms = value(u, (10.0, 10000.0), (1e-3, 1e12), p_wild);
        t += &format!("ohms = {ohms:e}\n");
        if u() < 0.3 {
            let lo = (ohms * (0.1 + 0.9 * u())).max(1e-3);
            let hi = (ohms * (1.0 + u())).min(1e12);
            t += &format!("min_ohms = {lo:e}\nmax_ohms = {hi:e}\n");
        }
    }
    if u() < 0.15 {
        t += &format!(
            "[regulator]\noutput_v = {:e}\ndropout_v = {}\n",
            value(u, (5.0, 24.0), (0.1, 1e4), p_wild),
            u() * 3.0
        );
    }
    t
}

/// As [`supply_text`], drawing again until the validator accepts the file (the floors on
/// values are the validator's own; a draw that falls below one is simply not a legal supply).
pub fn valid_supply_text(u: &mut dyn FnMut() -> f64, p_wild: f64) -> String {
    for _ in 0..1000 {
        let t = supply_text(u, p_wild);
        if railcheck::supply::Supply::from_toml_str(&t).is_ok() {
            return t;
        }
    }
    panic!("the generator drew 1,000 files the validator refused");
}

/// xorshift64* (Vigna 2016): a small reproducible source of uniform numbers in [0, 1).
pub fn xorshift(seed: u64) -> impl FnMut() -> f64 {
    let mut state = seed.max(1);
    move || {
        state ^= state >> 12;
        state ^= state << 25;
        state ^= state >> 27;
        (state.wrapping_mul(0x2545_f491_4f6c_dd1d) >> 11) as f64 / (1u64 << 53) as f64
    }
}
