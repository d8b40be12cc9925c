//! `railcheck diagnose`: each reading against its window and the faults that fit, in words and
//! units ("DC 9.62 V, expected 9.85 .. 10.15 V (nominal 10.00 V): below"); the JSON keeps its
//! keys and values for scripts.

use super::files::{library_holding, resolve};
use super::words::{ohms, reading, reading_value, value_like, window};
use super::{Save, calibrate, written};
use crate::diagnose::{self, Diagnosis, Expectation, Fault, Hypothesis, Readings};
use crate::escape::printable;
use crate::supply::Supply;
use crate::units::{format_number, format_si, format_uf};
use anyhow::{Context, Result};
use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

/// How many hypotheses the text shows, best first (the JSON has them all).
const SHOWN: usize = 5;

/// A fault in words, as a technician would name it.
pub fn fault_words(fault: Fault) -> &'static str {
    match fault {
        Fault::Healthy => "healthy, within its tolerances",
        Fault::CapacitanceLow => "filter capacitance low",
        Fault::EsrHigh => "filter capacitor's ESR high",
        Fault::CapacitorOpen => "filter capacitor open",
        Fault::RectifierLegOpen => "a rectifier leg open (a diode or half winding)",
        Fault::MainsLow => "mains low",
        Fault::MainsHigh => "mains high",
        Fault::SecondaryLow => "secondary low (shorted turns or a wrong tap)",
        Fault::LoadHeavy => "load heavier than the file states",
        Fault::LoadLight => "load lighter than the file states",
        Fault::RegulatorDropout => "regulator out of regulation (valley under its dropout)",
        Fault::NoOutput => "no output",
        Fault::ChokeShorted => "choke shorted (its inductance gone)",
        Fault::ChokeOpen => "choke open",
        Fault::PhaseLost => "a phase lost (a blown fuse or an open line)",
        Fault::ReactorShorted => "line reactor shorted (its inductance gone)",
        Fault::WeakValve => "rectifier valve weak (its emission fallen)",
    }
}

/// The part more likely than not at fault, with its faults when more than one shares it: "Likely
/// part: the filter capacitor, 89.0 % (filter capacitor's ESR high 46.0 %, filter capacitance
/// low 43.0 %); the next checks below tell which". None when no part holds more than half.
pub fn likely_part_line(d: &Diagnosis) -> Option<String> {
    let p = d.likely_part()?;
    let mut line = format!("Likely part: {}, {:.1} %", p.part.words(), 100.0 * p.score);
    if p.faults.len() > 1 {
        let each: Vec<String> = p
            .faults
            .iter()
            .map(|(f, s)| format!("{} {:.1} %", fault_words(*f), 100.0 * s))
            .collect();
        line.push_str(&format!(
            " ({}); the next checks below tell which",
            each.join(", ")
        ));
    }
    Some(line)
}

/// What a hypothesis's fitted value says, in words and units ("filter capacitor about 31 uF of
/// its 47 uF"); what a fault without a value means; None when there is nothing to add.
pub fn estimate_words(h: &Hypothesis, supply: &Supply) -> Option<String> {
    let label_uf = supply.filter.uf.unwrap_or(0.0);
    let words = match (h.fault, h.estimate) {
        (_, Some(("uf", uf))) => format!(
            "{} about {} of its {}",
            supply.reservoir_words(),
            format_uf(uf),
            format_uf(label_uf)
        ),
        (_, Some(("uf_each", uf))) => format!(
            "every filter capacitor about {} of its {}",
            format_uf(uf),
            format_uf(label_uf)
        ),
        (_, Some(("esr_ohms", r))) => format!(
            "ESR about {} in the {} (the file states {})",
            ohms(r),
            supply.reservoir_words(),
            ohms(supply.filter.esr())
        ),
        (_, Some(("vrms", v))) => format!(
            "mains about {} against {} nominal",
            format_si(v, "V"),
            format_si(supply.mains.vrms, "V")
        ),
        (_, Some(("ratio", r))) => format!(
            "turns ratio about {r:.2}:1 (the file gives {:.2}:1)",
            supply.winding().map(|w| w.ratio).unwrap_or(0.0)
        ),
        (_, Some(("load_a", a))) => format!("load current about {}", format_si(a, "A")),
        (_, Some(("valley_v", v))) => {
            let need = supply
                .regulator
                .as_ref()
                .map_or(0.0, |r| r.output_v + r.dropout_v);
            format!(
                "the rail's valley {} is under the {} the regulator needs",
                format_si(v, "V"),
                format_si(need, "V")
            )
        }
        (Fault::CapacitorOpen, _) if supply.filter.kind == crate::supply::FilterKind::Crc => {
            "the rail looks filtered by the CRC's resistor and second capacitor alone".into()
        }
        (Fault::CapacitorOpen, _) => "the rail looks unfiltered".into(),
        (Fault::RectifierLegOpen, _) => {
            "ripple at the line frequency: half the charging pulses missing".into()
        }
        (Fault::NoOutput, _) => "the rail is dead".into(),
        (Fault::ChokeShorted, _) => crate::diagnose::choke_shorted_words(supply).into(),
        (Fault::ChokeOpen, _) => crate::diagnose::CHOKE_OPEN_WORDS.into(),
        (Fault::PhaseLost, _) => crate::diagnose::PHASE_LOST_WORDS.into(),
        (Fault::ReactorShorted, _) => crate::diagnose::REACTOR_SHORTED_WORDS.into(),
        (Fault::WeakValve, Some((_, v))) => format!(
            "the valve drops about {} V at its data sheet's current",
            format_number((v * 10.0).round() / 10.0)
        ),
        (_, Some((key, v))) if !key.is_empty() => format!("{key} about {}", format_number(v)),
        _ => return None,
    };
    Some(words)
}

/// One reading against its window: "DC 9.62 V, expected 9.85 .. 10.15 V (nominal 10.00 V):
/// below".
pub fn expectation_line(e: &Expectation) -> String {
    let (_, unit) = reading(e.reading);
    format!(
        "{}, expected {} (nominal {}): {}",
        reading_value(e.reading, e.value),
        window(e.min, e.max, unit),
        value_like(e.nominal, e.min, e.max, unit),
        e.status
    )
}

/// The diagnosis as text: the verdict, each reading against its window, the likeliest faults
/// with what they mean and the check that tells them apart, and the caution.
pub fn render_text(out: &mut impl Write, supply: &Supply, d: &Diagnosis) -> std::io::Result<()> {
    writeln!(
        out,
        "{}: {}",
        printable(&supply.name),
        d.verdict.to_uppercase()
    )?;
    for e in &d.expectations {
        writeln!(out, "  {}", expectation_line(e))?;
    }
    if let Some(line) = likely_part_line(d) {
        writeln!(out, "  {line}")?;
    }
    writeln!(out, "  Most likely first:")?;
    for h in d.hypotheses.iter().take(SHOWN) {
        writeln!(
            out,
            "  {:>5.1} %  {}",
            100.0 * h.score,
            fault_words(h.fault)
        )?;
        if let Some(words) = estimate_words(h, supply) {
            writeln!(out, "           {words}")?;
        }
        writeln!(out, "           next: {}", h.next_check)?;
    }
    writeln!(
        out,
        "  Caution: discharge the filter and verify with a meter before touching."
    )
}

/// Diagnoses the supply `name` from `readings`, records a visit (or a baseline and its
/// calibration) as `save` asks, and writes the diagnosis.
pub fn run(
    out: &mut impl Write,
    name: &str,
    readings: Readings,
    json: bool,
    save: Save,
    cli_dir: &Option<PathBuf>,
    no_demo: bool,
) -> Result<ExitCode> {
    let (supply, file) = resolve(name, cli_dir, no_demo)?;
    let d = diagnose::diagnose(&supply, &readings).map_err(|e| anyhow::anyhow!("{e}"))?;
    let today = crate::clock::today();
    let mut fitted = None;
    match save {
        Save::No => {}
        Save::Visit => {
            let lib = library_holding(
                &file,
                "--save records a visit in the library",
                cli_dir,
                no_demo,
            )?;
            // The visit is appended to the file as it is at the moment of saving, under the
            // library's lock: visits others recorded meanwhile are kept; a change to the
            // supply's values meanwhile is refused (the verdict would be stale).
            let visit = diagnose::visit_of(&readings, &d, &today);
            let saved = lib.append_visit(Path::new(&file), &supply, visit)?;
            if !json {
                written(writeln!(
                    out,
                    "recorded as a visit in {}",
                    printable(&saved.file.display().to_string())
                ))?;
            }
        }
        Save::Baseline => {
            let lib = library_holding(
                &file,
                "--baseline records a visit and a calibration in the library",
                cli_dir,
                no_demo,
            )?;
            let date: crate::visit::Date = today.parse().context("today's date")?;
            let fit = diagnose::calibrate::calibrate(&supply, &readings, date)
                .map_err(|e| anyhow::anyhow!("{e}"))?;
            let visit = diagnose::visit_of(&readings, &d, &today);
            let saved = lib.record_calibration(
                Path::new(&file),
                &supply,
                fit.calibration.clone(),
                &readings,
                Some(visit),
            )?;
            if !json {
                written(writeln!(
                    out,
                    "recorded as the baseline visit in {}",
                    printable(&saved.file.display().to_string())
                ))?;
            }
            fitted = Some(fit);
        }
    }
    if json {
        let mut v = diagnose::json(&supply, &d);
        if let Some(fit) = &fitted {
            v["calibration"] = calibrate::json(&supply, fit);
        }
        written(writeln!(out, "{v}"))?;
        return Ok(ExitCode::SUCCESS);
    }
    written(render_text(out, &supply, &d))?;
    if let Some(fit) = &fitted {
        written(calibrate::render_text(out, &supply, fit))?;
    }
    // Today's readings after a long gap since the unit's last visit: the storage advice.
    if let Some(c) = today
        .parse::<crate::visit::Date>()
        .ok()
        .and_then(|d| crate::visit::Visit::day_of(&d))
        .and_then(|on| crate::analysis::capacitor_life::storage_caution(&supply, on))
    {
        written(writeln!(out, "  ! Storage: {c}"))?;
    }
    Ok(ExitCode::SUCCESS)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The trade's bench supply (center tap, 80 V 60 Hz, 4.85:1, 47 uF, 680 ohm).
    fn bench() -> Supply {
        Supply::from_toml_str(
            "format = 1\nname = \"bench\"\n[mains]\nvrms = 80.0\nhz = 60.0\n[transformer]\n\
             ratio = 4.85\n[rectifier]\ntopology = \"center-tap\"\n[filter]\n\
             kind = \"capacitor\"\nuf = 47.0\n[load]\nohms = 680.0\n",
        )
        .unwrap()
    }

    fn expectation(reading: &'static str, value: f64, status: &'static str) -> Expectation {
        Expectation {
            reading,
            value,
            uncertainty: 0.07,
            nominal: 10.0,
            min: 9.85,
            max: 10.15,
            status,
            outside_pct: 0.0,
        }
    }

    fn hypothesis(fault: Fault, estimate: Option<(&'static str, f64)>) -> Hypothesis {
        Hypothesis {
            fault,
            score: 0.5,
            estimate,
            why: "dc_v 9.62 below 9.850..10.150".into(),
            next_check: fault.next_check(),
            misfit: 1.0,
        }
    }

    #[test]
    fn readings_and_estimates_are_in_words_and_units() {
        let d = Diagnosis {
            verdict: "suspect",
            expectations: vec![expectation("dc_v", 9.62, "below")],
            hypotheses: vec![
                hypothesis(Fault::CapacitanceLow, Some(("uf", 31.2))),
                hypothesis(Fault::EsrHigh, Some(("esr_ohms", 2.1))),
            ],
        };
        let mut out = Vec::new();
        render_text(&mut out, &bench(), &d).unwrap();
        let text = String::from_utf8(out).unwrap();
        for want in [
            "bench: SUSPECT",
            "DC 9.62 V, expected 9.85 .. 10.15 V (nominal 10.00 V): below",
            "filter capacitance low",
            "filter capacitor about 31.2 uF of its 47 uF",
            "ESR about 2.10 ohm in the filter capacitor (the file states 0.00 ohm)",
            "next: measure the filter capacitor",
            "Caution: discharge the filter",
        ] {
            assert!(text.contains(want), "{want:?} not in:\n{text}");
        }
        // No internal key reaches the text.
        for key in ["dc_v", "uf ", "esr_ohms", "capacitance-low", "esr-high"] {
            assert!(!text.contains(key), "{key:?} in:\n{text}");
        }
    }

    #[test]
    fn every_estimate_a_diagnosis_gives_has_words_and_a_unit() {
        let s = bench();
        for (fault, key, value, want) in [
            (
                Fault::CapacitanceLow,
                "uf_each",
                30.0,
                "every filter capacitor about 30 uF",
            ),
            (
                Fault::MainsLow,
                "vrms",
                70.0,
                "mains about 70.0 V against 80.0 V nominal",
            ),
            (
                Fault::SecondaryLow,
                "ratio",
                5.5,
                "turns ratio about 5.50:1 (the file gives 4.85:1)",
            ),
            (
                Fault::LoadHeavy,
                "load_a",
                0.021,
                "load current about 21.0 mA",
            ),
            (
                Fault::RegulatorDropout,
                "valley_v",
                11.2,
                "the rail's valley 11.2 V",
            ),
        ] {
            let words = estimate_words(&hypothesis(fault, Some((key, value))), &s).unwrap();
            assert!(words.contains(want), "{key}: {words}");
        }
        // Each fault in words of its own, never its JSON key ("capacitance-low").
        for fault in Fault::ALL {
            let words = fault_words(fault);
            assert_ne!(words, fault.key());
            assert!(
                !fault.key().contains('-') || !words.contains(fault.key()),
                "{words}"
            );
        }
    }
}
