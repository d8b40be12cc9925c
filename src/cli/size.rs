//! `railcheck size`: the smallest E12 and E6 filter capacitor for a target, in microfarads with
//! the voltage rating it needs; for a choke input, the smallest E12 and E6 choke above its
//! critical inductance.

use super::written;
use crate::analysis::capacitor_life;
use crate::analysis::sizing::{self, Sized, SizedChoke, Target};
use crate::escape::printable;
use crate::supply::{FilterKind, Supply};
use crate::units::{format_number, format_si, format_uf};
use anyhow::{Result, bail};
use std::io::Write;
use std::process::ExitCode;

/// The target the options ask for; `--headroom` on a supply without a regulator is refused
/// with the option that says what it likely means.
pub fn target(
    supply: &Supply,
    ripple_pp: Option<f64>,
    headroom: Option<f64>,
    min_valley: Option<f64>,
) -> Result<Target> {
    Ok(match (ripple_pp, headroom, min_valley) {
        (Some(v), _, _) => Target::RipplePp(v),
        (None, Some(_), _) if supply.regulator.is_none() => bail!(
            "--headroom is the margin of the worst-case valley over a regulator's output plus \
             dropout, and {} has no regulator; give --min-valley V for the lowest the rail may \
             fall to, or --ripple-pp V",
            printable(&supply.name)
        ),
        (None, Some(v), _) => Target::Headroom(v),
        (None, None, Some(v)) => Target::MinValley(v),
        (None, None, None) => bail!("give --ripple-pp V, --headroom V or --min-valley V"),
    })
}

/// The sizing as text: the target in words, then each series' capacitor in microfarads with
/// the voltage rating and ripple current it needs; then a choke input's choke.
pub fn render_text(
    out: &mut impl Write,
    supply: &Supply,
    target: Target,
    sized: &[Sized],
    chokes: &[SizedChoke],
) -> std::io::Result<()> {
    writeln!(out, "{}", printable(&supply.name))?;
    if supply.filter.kind == FilterKind::None {
        writeln!(
            out,
            "  no filter capacitor now: sizing the capacitor to add across the rail"
        )?;
    } else {
        writeln!(
            out,
            "  sizing {}",
            sizing::sized_capacitor_words(supply.filter.kind)
        )?;
    }
    match (target, &supply.regulator) {
        (Target::RipplePp(v), _) => writeln!(
            out,
            "  target: worst-case ripple at most {} peak to peak",
            format_si(v, "V")
        )?,
        (Target::Headroom(v), Some(r)) => writeln!(
            out,
            "  target: worst-case valley at least {} above the regulator's {} output plus {} \
             dropout, so at least {}",
            format_si(v, "V"),
            format_si(r.output_v, "V"),
            format_si(r.dropout_v, "V"),
            format_si(r.output_v + r.dropout_v + v, "V")
        )?,
        // Refused before sizing; said plainly should it ever get here.
        (Target::Headroom(v), None) => writeln!(
            out,
            "  target: a headroom of {} with no regulator to be above",
            format_si(v, "V")
        )?,
        (Target::MinValley(v), _) => writeln!(
            out,
            "  target: worst-case valley (the rail's lowest point) at least {}",
            format_si(v, "V")
        )?,
    }
    for s in sized {
        let part = match s.rated_v {
            Some(r) => format!("{} {r} V", format_uf(s.uf)),
            None => format!(
                "{}, above 450 V: use capacitors in series with balancing resistors",
                format_uf(s.uf)
            ),
        };
        writeln!(
            out,
            "  {:<4} {:<14} ripple current {} RMS  (worst ripple {}, valley {}, peak {})",
            s.series,
            part,
            format_si(s.ripple_a, "A"),
            format_si(s.worst_ripple_pp_v, "V"),
            format_si(s.worst_valley_v, "V"),
            format_si(s.worst_peak_v, "V"),
        )?;
    }
    writeln!(
        out,
        "  voltage rating keeps the worst peak within {:.0} % of it (usual derating)",
        sizing::DERATING * 100.0
    )?;
    grades_text(out, supply, sized)?;
    if let Some(c) = chokes.first() {
        writeln!(
            out,
            "  choke input: critical inductance {} at the lightest load, {} ohm with any \
             bleeder (R / 3w full wave, pi R / 2w half wave); the smallest choke above it:",
            format_si(c.critical_henries, "H"),
            format_number(c.lightest_ohms)
        )?;
    }
    for c in chokes {
        writeln!(
            out,
            "  {:<4} {} (its inductance at the lightest load's current)",
            c.series,
            format_si(c.henries, "H")
        )?;
    }
    Ok(())
}

/// The replacement grades for the first (E12) capacitor, the longest-lived first, at the
/// unit's duty: what to fit from the van.
fn grades(supply: &Supply, sized: &[Sized]) -> Vec<capacitor_life::GradeLife> {
    let Some(s) = sized.first() else {
        return Vec::new();
    };
    // The sized part's own worst ripple current; the nominal taken alike (the sizing solves
    // the worst case only), so the ranking is at the worst corner.
    let hz = supply.rectifier.topology.pulses_per_cycle() as f64 * supply.mains.hz;
    capacitor_life::rank_grades(supply, s.ripple_a, s.ripple_a, hz)
}

fn grades_text(out: &mut impl Write, supply: &Supply, sized: &[Sized]) -> std::io::Result<()> {
    let ranked = grades(supply, sized);
    let Some(s) = sized.first() else {
        return Ok(());
    };
    let f = &supply.filter;
    writeln!(
        out,
        "  replacement grades for the {} {}, longest-lived first (worst ripple {} RMS at {}, \
         {} h a day):",
        s.series,
        format_uf(s.uf),
        format_si(s.ripple_a, "A"),
        match f.ambient_c {
            Some(a) => format!("{} degC", format_number(a)),
            None => format!(
                "{:.0} degC, ambient not stated",
                capacitor_life::ASSUMED_AMBIENT_C.1
            ),
        },
        format_number(
            f.duty_h_per_day
                .unwrap_or(capacitor_life::DEFAULT_DUTY_H_PER_DAY)
        )
    )?;
    for g in &ranked {
        let ripple = match g.ripple_a {
            Some(a) => format!("ripple rated {}", format_si(a, "A")),
            None => "ripple rating not stated".into(),
        };
        writeln!(
            out,
            "    {:>3.0} degC {:>6} h, {ripple:<24} {} (core {:.0} degC)",
            g.rated_c,
            format_number(g.rated_h),
            capacitor_life::years_words(g.worst.years),
            g.worst.core_c
        )?;
    }
    if f.rated_ripple_a.is_none() {
        writeln!(
            out,
            "    (no filter.rated_ripple_a: the ripple's own heating is left out for every grade)"
        )?;
    }
    Ok(())
}

/// The sizing as one JSON line (keys unchanged: name, file, target, derating, capacitors).
pub fn render_json(
    out: &mut impl Write,
    supply: &Supply,
    file: &str,
    target: Target,
    sized: &[Sized],
    chokes: &[SizedChoke],
) -> std::io::Result<()> {
    writeln!(
        out,
        "{}",
        serde_json::json!({
            "name": supply.name,
            "file": file,
            "target": target,
            "derating": sizing::DERATING,
            "capacitors": sized,
            "chokes": chokes,
            "replacement_grades": grades(supply, sized),
        })
    )
}

/// Sizes `supply` (read from `file`) for `target` and writes the answer.
pub fn run(
    out: &mut impl Write,
    supply: &Supply,
    file: &str,
    target: Target,
    json: bool,
) -> Result<ExitCode> {
    let sized = sizing::size(supply, target).map_err(|e| anyhow::anyhow!("{file}: {e}"))?;
    let chokes = sizing::size_choke(supply)
        .transpose()
        .map_err(|e| anyhow::anyhow!("{file}: {e}"))?
        .unwrap_or_default();
    written(if json {
        render_json(out, supply, file, target, &sized, &chokes)
    } else {
        render_text(out, supply, target, &sized, &chokes)
    })?;
    Ok(ExitCode::SUCCESS)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn sized(uf: f64, rated_v: Option<f64>) -> Sized {
        Sized {
            series: "E12",
            uf,
            worst_ripple_pp_v: 0.9,
            worst_valley_v: 25.1,
            worst_peak_v: 36.8,
            rated_v,
            ripple_a: 1.2,
        }
    }

    fn supply(regulator: bool) -> Supply {
        let mut text = String::from(
            "format = 1\nname = \"bench\"\n[mains]\nvrms = 230.0\nhz = 50.0\n[transformer]\n\
             ratio = 9.58\nsecondary_ohms = 1.8\n[rectifier]\ntopology = \"bridge\"\n\
             [filter]\nkind = \"capacitor\"\nuf = 2200.0\n[load]\namps = 0.35\n",
        );
        if regulator {
            text.push_str("[regulator]\noutput_v = 12.0\ndropout_v = 2.0\n");
        }
        Supply::from_toml_str(&text).expect("a valid supply")
    }

    #[test]
    fn capacitors_print_in_microfarads_with_their_rating() {
        let mut out = Vec::new();
        let s = supply(false);
        render_text(
            &mut out,
            &s,
            Target::RipplePp(1.0),
            &[sized(3900.0, Some(50.0)), sized(4.7, None)],
            &[],
        )
        .unwrap();
        let text = String::from_utf8(out).unwrap();
        assert!(text.contains("3900 uF 50 V"), "{text}");
        assert!(text.contains("4.7 uF, above 450 V"), "{text}");
        assert!(!text.contains("mF"), "{text}");
    }

    #[test]
    fn a_choke_input_says_which_capacitor_and_gives_its_choke() {
        let s = Supply::from_toml_str(
            "format = 1\nname = \"choke\"\n[mains]\nvrms = 230.0\nhz = 50.0\n[transformer]\n\
             ratio = 7.667\nsecondary_ohms = 0.5\n[rectifier]\ntopology = \"bridge\"\n\
             [filter]\nkind = \"lc\"\nuf = 2200.0\nchoke_h = 0.2\nchoke_ohms = 2.0\n\
             [load]\nohms = 47.0\n",
        )
        .unwrap();
        let chokes = sizing::size_choke(&s).unwrap().unwrap();
        let mut out = Vec::new();
        render_text(
            &mut out,
            &s,
            Target::RipplePp(0.1),
            &[sized(6800.0, Some(63.0))],
            &chokes,
        )
        .unwrap();
        let text = String::from_utf8(out).unwrap();
        assert!(text.contains("the capacitor after the choke"), "{text}");
        assert!(text.contains("critical inductance 49.9 mH"), "{text}");
        assert!(
            text.contains("E12  56.0 mH") && text.contains("E6   68.0 mH"),
            "{text}"
        );
    }

    #[test]
    fn headroom_needs_a_regulator_and_says_which_option_fits() {
        let err = target(&supply(false), None, Some(2.0), None)
            .unwrap_err()
            .to_string();
        assert!(
            err.contains("--headroom")
                && err.contains("no regulator")
                && err.contains("--min-valley"),
            "{err}"
        );
        assert_eq!(
            target(&supply(true), None, Some(2.0), None).unwrap(),
            Target::Headroom(2.0)
        );
        assert_eq!(
            target(&supply(false), None, None, Some(20.0)).unwrap(),
            Target::MinValley(20.0)
        );
        // With a regulator the target names its output, dropout and the valley they need.
        let mut out = Vec::new();
        render_text(
            &mut out,
            &supply(true),
            Target::Headroom(2.0),
            &[sized(2200.0, Some(50.0))],
            &[],
        )
        .unwrap();
        let text = String::from_utf8(out).unwrap();
        assert!(
            text.contains("12.0 V output plus 2.00 V dropout, so at least 16.0 V"),
            "{text}"
        );
    }
}
