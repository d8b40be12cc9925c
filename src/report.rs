//! The report of one supply, as aligned text and as one JSON object. Pure formatting: the
//! command line prints it, the tests read it.

use crate::analysis::cautions::{SAFE_TOUCH_V, cautions};
use crate::analysis::checks::{self, Check, Status};
use crate::analysis::worst_case::{self, WorstCase};
use crate::analysis::{capacitor_life, valve};
use crate::circuit::diode::DiodeParams;
use crate::circuit::{self, CircuitError, Figure, Figures, HandEstimate, Naming, Operating};
use crate::escape::printable;
use crate::supply::{DiodeSpec, FilterKind, Supply, Topology};
use crate::units::{format_number, format_si, format_uf};
use serde_json::{Value, json};

/// A supply solved for its report.
#[derive(Debug, Clone)]
pub struct Report {
    pub supply: Supply,
    pub file: String,
    pub nominal: Operating,
    pub hand: HandEstimate,
    pub differences: Vec<String>,
    pub worst: WorstCase,
    pub checks: Vec<Check>,
    /// Checks skipped because the file gives no rating for them.
    pub not_rated: Vec<&'static str>,
    /// Whether the voltage checks assumed no load (none stated).
    pub stress_no_load: bool,
    pub cautions: Vec<String>,
    /// The seeded statistical spread, when asked for.
    pub spread: Option<Vec<(&'static str, worst_case::Percentiles)>>,
    /// A rectifier valve's supply with silicon in its place, when asked for.
    pub solid_state: Option<valve::SolidState>,
    /// The first capacitor's expected life, when the file gives its life rating.
    pub capacitor_life: Option<capacitor_life::CapacitorLife>,
}

/// Samples of the statistical spread, and its fixed seed (so a report is reproducible).
pub const SPREAD_SAMPLES: usize = 2000;
pub const SPREAD_SEED: u64 = 0x5eed_2026;

/// Solves `supply` (read from `file`) at nominal and over its tolerance box and gathers what
/// its report shows; `touch_v` is the voltage taken as safe to touch (volts).
pub fn build(supply: Supply, file: &str, touch_v: f64) -> Result<Report, CircuitError> {
    let (nominal, hand) = circuit::solve_nominal(&supply)?;
    let differences = circuit::hand_differences(&supply, &nominal, &hand);
    let worst = worst_case::worst_case(&supply)?;
    let (stress, stress_no_load) = worst_case::voltage_stress(&supply)?;
    let (checks, not_rated) = checks::checks(&supply, &worst, &stress, stress_no_load);
    let cautions = cautions(&supply, stress.max_v, touch_v);
    let capacitor_life = capacitor_life::capacitor_life(&supply, &nominal.figures, &worst);
    Ok(Report {
        capacitor_life,
        supply,
        file: file.to_string(),
        nominal,
        hand,
        differences,
        worst,
        checks,
        not_rated,
        stress_no_load,
        cautions,
        spread: None,
        solid_state: None,
    })
}

impl Report {
    /// Adds the solid-state what-if (two more solves) when the rectifier is a valve; a
    /// junction rectifier is left as it is.
    pub fn with_solid_state(mut self) -> Result<Report, CircuitError> {
        if self.supply.has_valve_rectifier() {
            self.solid_state = Some(valve::solid_state_what_if(
                &self.supply,
                &self.nominal.figures,
            )?);
        }
        Ok(self)
    }
}

/// [`build`] plus the seeded statistical spread (2,000 solves, a few tenths of a second).
pub fn build_with_spread(supply: Supply, file: &str, touch_v: f64) -> Result<Report, CircuitError> {
    let spread = worst_case::spread(&supply, SPREAD_SAMPLES, SPREAD_SEED)?;
    let mut r = build(supply, file, touch_v)?;
    r.spread = Some(spread);
    Ok(r)
}

/// [`build`] with the usual 60 V touch limit.
pub fn build_default(supply: Supply, file: &str) -> Result<Report, CircuitError> {
    build(supply, file, SAFE_TOUCH_V)
}

/// Each figure's label, JSON name, value and unit, in the report's order, in the words of
/// `supply` (see [`Figure::words`]).
pub fn figure_rows(
    f: &Figures,
    supply: &Supply,
) -> Vec<(&'static str, &'static str, Option<f64>, &'static str)> {
    let naming = Naming::of(supply);
    Figure::ALL
        .iter()
        .filter(|fig| fig.applies(f))
        .map(|fig| (fig.words(naming).0, fig.key(), fig.of(f), fig.unit()))
        .collect()
}

/// The filter as a technician orders its parts: capacitances in microfarads with the voltage
/// rating where the file gives one ("2200 uF 50 V capacitor filter", "CRC filter 470 uF 35 V,
/// 47 ohm, 220 uF").
fn filter_words(s: &Supply) -> String {
    let f = &s.filter;
    let part = |uf: Option<f64>| {
        let mut text = format_uf(uf.unwrap_or(0.0));
        if let Some(v) = f.rated_v {
            text.push_str(&format!(" {} V", format_number(v)));
        }
        text
    };
    match f.kind {
        FilterKind::None => "no filter".into(),
        FilterKind::Capacitor if s.rectifier.topology == Topology::Doubler => {
            format!("two {} capacitors", part(f.uf))
        }
        FilterKind::Capacitor => format!("{} capacitor filter", part(f.uf)),
        FilterKind::Crc => format!(
            "CRC filter {}, {} ohm, {}",
            part(f.uf),
            format_number(f.series_ohms.unwrap_or(0.0)),
            format_uf(f.second_uf.unwrap_or(0.0))
        ),
        FilterKind::Lc => format!("choke input {}, {}", choke_words(s), part(f.uf)),
        FilterKind::Clc => format!(
            "CLC filter {}, {}, {}",
            part(f.uf),
            choke_words(s),
            format_uf(f.second_uf.unwrap_or(0.0))
        ),
    }
}

/// The supply in one line, as the report's header gives it: "230 V 50 Hz mains, bridge
/// rectifier, 2200 uF 50 V capacitor filter".
pub fn supply_line(s: &Supply) -> String {
    format!(
        "{} V {} Hz mains, {} rectifier, {}",
        format_number(s.mains.vrms),
        format_number(s.mains.hz),
        s.rectifier.topology.key(),
        filter_words(s)
    )
}

/// The choke as a technician names it: "10 H 150 ohm choke", a swinging one "5-20 H
/// swinging choke (200 mA), 90 ohm".
fn choke_words(s: &Supply) -> String {
    let f = &s.filter;
    let h = f.choke_h.unwrap_or(0.0);
    let ohms = format_number(f.choke_ohms.unwrap_or(0.0));
    match (f.choke_light_h, f.choke_rated_a) {
        (Some(light), Some(rated)) => format!(
            "{}-{} H swinging choke ({}), {ohms} ohm",
            format_number(h),
            format_number(light),
            format_si(rated, "A")
        ),
        _ => format!("{} H {ohms} ohm choke", format_number(h)),
    }
}

/// A rectifier valve's law and limits, in words: one line for the law, one for the limits
/// it is held to (and where they come from); nothing for a junction rectifier.
pub fn valve_words(s: &Supply) -> Vec<String> {
    let (Ok(DiodeParams::Valve { drop_v, at_a }), Some(l)) =
        (s.rectifier_diode(), valve::limits(s))
    else {
        return Vec::new();
    };
    let named = match &s.rectifier.diode {
        DiodeSpec::Preset(p) => format!("{p}, "),
        DiodeSpec::Fixed { .. } | DiodeSpec::Junction { .. } | DiodeSpec::Valve { .. } => {
            String::new()
        }
    };
    let heated = if l.directly_heated {
        "directly heated"
    } else {
        "indirectly heated"
    };
    let mut limits = Vec::new();
    if let Some(uf) = l.max_first_uf {
        limits.push(format!("first capacitor {} uF", format_number(uf)));
    }
    if let Some([(v0, r0), (v1, r1)]) = l.min_plate_ohms {
        limits.push(if r0 == r1 {
            format!("plate supply impedance {} ohm", format_number(r0))
        } else {
            format!(
                "plate supply impedance {}-{} ohm from {} to {} V RMS",
                format_number(r0),
                format_number(r1),
                format_number(v0),
                format_number(v1)
            )
        });
    }
    if let Some(a) = l.peak_a {
        limits.push(format!("peak {} a plate", format_si(a, "A")));
    }
    if let Some(v) = l.piv_v {
        limits.push(format!("PIV {} V", format_number(v)));
    }
    if let Some(a) = l.dc_a {
        limits.push(format!("DC {}", format_si(a, "A")));
    }
    let source = if matches!(s.rectifier.diode, DiodeSpec::Preset(_)) {
        " (typical of its class, from memory, where the file states none)"
    } else {
        ""
    };
    let mut out = vec![format!(
        "rectifier valve: {named}{} V at {} a plate (three-halves-power law), {heated}",
        format_number(drop_v),
        format_si(at_a, "A")
    )];
    if !limits.is_empty() {
        out.push(format!("valve limits{source}: {}", limits.join(", ")));
    }
    out
}

/// The valve's law and limits for the JSON (null for a junction rectifier).
fn valve_json(s: &Supply) -> Value {
    let (Ok(DiodeParams::Valve { drop_v, at_a }), Some(l)) =
        (s.rectifier_diode(), valve::limits(s))
    else {
        return Value::Null;
    };
    json!({
        "drop_v": drop_v,
        "at_a": at_a,
        "directly_heated": l.directly_heated,
        "max_first_uf": l.max_first_uf,
        "min_plate_ohms": valve::plate_vrms(s).and_then(|v| l.min_plate_ohms_at(v)),
        "plate_supply_ohms": valve::plate_supply_ohms(s),
        "rated_peak_a": l.peak_a,
        "rated_piv_v": l.piv_v,
        "rated_dc_a": l.dc_a,
    })
}

/// A figure's value in its unit as the report's table shows it ("unlimited" for None).
pub(crate) fn show(value: Option<f64>, unit: &str) -> String {
    match (value, unit) {
        (None, _) => "unlimited".into(),
        (Some(v), "deg") => format!("{v:.0} deg"),
        (Some(v), "Hz") => format!("{v:.0} Hz"),
        (Some(v), u) => format_si(v, u),
    }
}

impl Report {
    /// Whether any rating check failed (the command's exit status 1).
    pub fn any_failed(&self) -> bool {
        self.checks.iter().any(|c| c.status == Status::Fail)
    }

    /// The aligned text report.
    pub fn text(&self) -> String {
        let s = &self.supply;
        let mut out = String::new();
        // The name and the path come from files and the command line: escaped, so a control
        // character in them cannot drive the terminal.
        out.push_str(&format!("{}\n", printable(&s.name)));
        out.push_str(&format!("  file: {}\n", printable(&self.file)));
        // Where the unit is and what the file says of it, typed by people: escaped like the
        // name. The notes keep their own lines and are not wrapped here: a terminal wraps a
        // long line itself, and a report copied into a ticket keeps the text as it was typed.
        if let Some(site) = s.site.as_deref().filter(|x| !x.trim().is_empty()) {
            out.push_str(&format!("  site: {}\n", printable(site)));
        }
        for (i, line) in s.notes.trim_end().lines().enumerate() {
            let lead = if i == 0 { "  notes: " } else { "         " };
            out.push_str(&format!("{lead}{}\n", printable(line)));
        }
        out.push_str(&format!("  {}\n", supply_line(s)));
        if s.rectifier.topology.rails() == 2 {
            out.push_str("  split rail: figures are the + rail; the - rail mirrors it\n");
        }
        for line in valve_words(s) {
            out.push_str(&format!("  {line}\n"));
        }
        if let Ok(w) = s.winding()
            && w.source == crate::circuit::winding::WindingSource::Nameplate
            && let Some(r) = w.assumed_regulation_pct
        {
            out.push_str(&format!(
                "  regulation {r:.0} % assumed from the {} VA rating\n",
                format_number(s.transformer.rated_va.unwrap_or(0.0))
            ));
        }
        out.push_str(&format!(
            "  tolerances: {}\n",
            self.worst.tolerances.join("; ")
        ));
        // What the file leaves out is a range, not an ideal value: each said as assumed.
        for a in &self.worst.assumed {
            out.push_str(&format!("  assumed: {}\n", printable(&a.why)));
        }
        // Values a template or the screen filled in that nobody has confirmed yet.
        if !self.supply.unconfirmed.is_empty() {
            out.push_str(&format!(
                "  not yet confirmed (a template's or the screen's guesses): {}\n",
                printable(&self.supply.unconfirmed.join(", "))
            ));
        }
        out.push('\n');
        // Corners are long in words: the table names them by letter, the legend spells them.
        let mut legend: Vec<String> = Vec::new();
        let mut letter = |words: &str| -> String {
            let i = match legend.iter().position(|w| w == words) {
                Some(i) => i,
                None => {
                    legend.push(words.to_string());
                    legend.len() - 1
                }
            };
            char::from(b'A' + (i % 26) as u8).to_string()
        };
        out.push_str(&format!(
            "  {:<22}{:>10}{:>12}{:>4}{:>12}{:>4}\n",
            "Figure", "Nominal", "Worst min", "", "Worst max", ""
        ));
        for (label, name, value, unit) in figure_rows(&self.nominal.figures, &self.supply) {
            let figure = Figure::from_key(name).expect("a figure of the table");
            let (lo, lo_at, hi, hi_at) = match self.worst.extent(figure) {
                Some(e) => (
                    show(Some(e.min), unit),
                    letter(&e.min_at),
                    show(Some(e.max), unit),
                    letter(&e.max_at),
                ),
                None => ("--".into(), String::new(), "--".into(), String::new()),
            };
            out.push_str(&format!(
                "  {:<22}{:>10}{:>12} {:<3}{:>12} {:<3}\n",
                label,
                show(value, unit),
                lo,
                lo_at,
                hi,
                hi_at
            ));
        }
        for (i, words) in legend.iter().enumerate() {
            out.push_str(&format!(
                "   {}: {}\n",
                char::from(b'A' + (i % 26) as u8),
                words
            ));
        }
        if let Some(spread) = &self.spread {
            out.push_str(&format!(
                "\n  Typical spread, 1st to 99th percentile ({SPREAD_SAMPLES} seeded samples, uniform in the box)\n"
            ));
            for (label, name, _, unit) in figure_rows(&self.nominal.figures, &self.supply) {
                if let Some((_, p)) = spread.iter().find(|(n, _)| *n == name) {
                    out.push_str(&format!(
                        "  {:<22}{:>12} to {:>10}\n",
                        label,
                        show(Some(p.p1), unit),
                        show(Some(p.p99), unit)
                    ));
                }
            }
        }
        if let Some(l) = &self.capacitor_life {
            out.push_str(
                "\n  Capacitor life (the first capacitor; life doubles every 10 degC cooler)\n",
            );
            out.push_str(&format!("  {}\n", l.words()));
            out.push_str(&format!("  worst at: {}\n", printable(&l.worst_at)));
            out.push_str(&format!("  {}\n", l.end_of_life_words()));
            for a in &l.assumed {
                out.push_str(&format!("  assumed: {a}\n"));
            }
        }
        if let Some(w) = &self.solid_state {
            out.push_str("\n  Solid-state replacement (silicon junctions in place of the valve)\n");
            for line in w.lines() {
                out.push_str(&format!("  - {line}\n"));
            }
        }
        let h = &self.hand;
        out.push_str("\n  Hand estimate (paper method)\n");
        if let Some(why) = h.not_applicable {
            out.push_str(&format!("  {why}\n"));
        } else {
            out.push_str(&format!(
                "  {:<24}{:>12}\n  {:<24}{:>12}\n  {:<24}{:>12}\n  {:<24}{:>12}\n",
                "Working peak",
                format_si(h.working_peak_v, "V"),
                "DC",
                format_si(h.dc_v, "V"),
                "Ripple peak-peak",
                format_si(h.ripple_pp_v, "V"),
                "Load current",
                format_si(h.load_a, "A"),
            ));
        }
        for a in &self.nominal.approximations {
            out.push_str(&format!("  Approximation: {a}\n"));
        }
        if self.worst.approximated > 0 {
            out.push_str(&format!(
                "  Approximation: {} of the {} worst-case points were solved with a six-pulse \
                 bridge's phases lumped (their own currents too slow to settle over the whole \
                 box, or not settling there), the commutation overlap left out: the DC there \
                 reads 1-2 % high\n",
                self.worst.approximated,
                self.worst.solved.len()
            ));
        }
        if !self.differences.is_empty() {
            out.push_str("  Why they differ:\n");
            for d in &self.differences {
                out.push_str(&format!("  - {d}\n"));
            }
        }
        out.push_str("\n  Checks\n");
        for c in &self.checks {
            out.push_str(&format!(
                "  {:<5} {:<22} {}\n",
                c.status.word(),
                c.id,
                c.message
            ));
        }
        if !self.not_rated.is_empty() {
            out.push_str(&format!(
                "  not rated (no rating in the file): {}\n",
                self.not_rated.join(", ")
            ));
        }
        out.push_str("\n  Cautions\n");
        for c in &self.cautions {
            out.push_str(&format!("  ! {c}\n"));
        }
        out
    }

    /// The JSON object of the report (one line when serialised).
    pub fn json(&self) -> Value {
        let mut nominal = serde_json::to_value(&self.nominal.figures).expect("figures serialise");
        nominal["waveform"] =
            serde_json::to_value(&self.nominal.waveform).expect("waveform serialises");
        let worst: serde_json::Map<String, Value> = self
            .worst
            .extents
            .iter()
            .map(|(name, e)| (name.to_string(), serde_json::to_value(e).expect("extent")))
            .collect();
        json!({
            "name": self.supply.name,
            "site": self.supply.site,
            "notes": self.supply.notes,
            "file": self.file,
            "topology": self.supply.rectifier.topology.key(),
            "rail": if self.supply.rectifier.topology.rails() == 2 { "+" } else { "single" },
            "nominal": nominal,
            "hand_estimate": self.hand,
            "hand_differences": self.differences,
            "approximations": self.nominal.approximations,
            "worst_case_points_approximated": self.worst.approximated,
            "tolerances": self.worst.tolerances,
            "assumed": self.worst.assumed,
            "unconfirmed": self.supply.unconfirmed,
            "worst_case": worst,
            "checks": self.checks,
            "not_rated": self.not_rated,
            "voltage_checks_at": if valve::warm_up_soar(&self.supply) {
                "high line, no load (a directly heated valve's warm-up soar)"
            } else if self.stress_no_load {
                "high line, no load (no minimum load stated)"
            } else {
                "high line, lightest load"
            },
            "cautions": self.cautions,
            "valve": valve_json(&self.supply),
            "solid_state": self.solid_state,
            "capacitor_life": self.capacitor_life,
            "spread": self.spread.as_ref().map(|s| s
                .iter()
                .map(|(n, p)| (n.to_string(), serde_json::to_value(p).expect("percentiles")))
                .collect::<serde_json::Map<String, Value>>()),
        })
    }
}
