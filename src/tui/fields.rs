//! The form's fields: one table holding every key of the supply file, grouped as the file is,
//! each row with its label, its file key, how it is edited, when it applies and its help line.
//! A number's allowed range and the reason for it are the validator's own ([`crate::supply`]'s
//! range table), so the form, its help line and the validator cannot disagree. Values are read
//! and written through the file's own key paths (`filter.uf`), so a new key is a new row.
//! Values are typed in engineering notation (`4k7`, `47u`, `2m2`); a bad one is refused with
//! the reason and never applied.

use crate::supply::{self as s, DiodeSpec, FilterKind, Range, Regulator, Supply, Topology};
use crate::units::{format_number, parse_si};

/// How a row is edited.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Edit {
    /// Free text; a required one cannot be emptied.
    Text { required: bool },
    /// A number in the range's unit (a microfarad key reads a bare number as uF and a prefix
    /// as farads: `2m2` is 2200 uF).
    Number(&'static Range),
    /// One of a few words: Left/Right cycle them, Enter opens a picker.
    Choice(Choice),
}

/// The rows that choose among words, some of which change which other rows apply.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Choice {
    Topology,
    Diode,
    FilterKind,
    /// The transformer given by its turns ratio or by its nameplate.
    TransformerForm,
    /// A resistive or a constant-current load.
    LoadKind,
    /// A linear regulator after the filter, or none.
    Regulator,
}

/// When a row applies to a supply (a row that does not is not shown).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum When {
    Always,
    /// A transformer is given (not straight off the line).
    HasTransformer,
    /// Where the line's impedance is the source's (no transformer), or a drive's reactor
    /// matters (three phases), or the file already gives a line: a transformer's own
    /// impedance swamps a line's on a small single-phase unit (the file's `[line]` still
    /// takes it).
    LineMatters,
    RatioForm,
    NameplateForm,
    Filtered,
    Crc,
    /// A CRC or a CLC: a second capacitor.
    SecondStage,
    /// An LC or a CLC: a choke.
    Choke,
    FixedDiode,
    JunctionDiode,
    ValveDiode,
    /// Any rectifier valve, a preset's or a law of one's own.
    Valve,
    CurrentLoad,
    ResistiveLoad,
    /// A constant-power load (a converter).
    PowerLoad,
    Regulated,
}

/// One row of the form.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Field {
    pub group: &'static str,
    pub label: &'static str,
    /// The file's key (`filter.uf`); a choice of form has a name of its own
    /// (`transformer.form`).
    pub path: &'static str,
    pub edit: Edit,
    pub when: When,
    /// A line of help for rows whose range does not say it (text and choices).
    pub help: &'static str,
}

const fn number(
    group: &'static str,
    label: &'static str,
    range: &'static Range,
    when: When,
) -> Field {
    Field {
        group,
        label,
        path: range.key,
        edit: Edit::Number(range),
        when,
        help: "",
    }
}

const fn choice(
    group: &'static str,
    label: &'static str,
    path: &'static str,
    which: Choice,
    help: &'static str,
) -> Field {
    Field {
        group,
        label,
        path,
        edit: Edit::Choice(which),
        when: When::Always,
        help,
    }
}

const fn text(
    label: &'static str,
    path: &'static str,
    required: bool,
    help: &'static str,
) -> Field {
    Field {
        group: "Supply",
        label,
        path,
        edit: Edit::Text { required },
        when: When::Always,
        help,
    }
}

use When::*;

/// Every key of the supply file, in the file's order and groups.
pub const FIELDS: [Field; 69] = [
    text("Name", "name", true, "the name the library lists it by"),
    text(
        "Site",
        "site",
        false,
        "where the unit is: building, panel, cabinet",
    ),
    text(
        "Notes",
        "notes",
        false,
        "anything the next visit should know",
    ),
    number("Mains", "RMS volts", &s::MAINS_VRMS, Always),
    number("Mains", "Frequency Hz", &s::MAINS_HZ, Always),
    number("Mains", "Low %", &s::MAINS_LOW_PCT, Always),
    number("Mains", "High %", &s::MAINS_HIGH_PCT, Always),
    number("Mains", "Crest pk/RMS", &s::MAINS_CREST, Always),
    number("Line", "Line ohm", &s::LINE_OHMS, LineMatters),
    number("Line", "Line mH", &s::LINE_MH, LineMatters),
    number("Line", "Reactor %", &s::REACTOR_PCT, LineMatters),
    number("Line", "Reactor rated A", &s::REACTOR_RATED_A, LineMatters),
    choice(
        "Transformer",
        "Given as",
        "transformer.form",
        Choice::TransformerForm,
        "the turns ratio, the nameplate's volts, VA and regulation, or none (the rectifier \
         straight off the line)",
    ),
    number("Transformer", "Ratio pri:sec", &s::RATIO, RatioForm),
    number("Transformer", "Primary V", &s::PRIMARY_VRMS, NameplateForm),
    number(
        "Transformer",
        "Secondary V",
        &s::SECONDARY_VRMS,
        NameplateForm,
    ),
    number(
        "Transformer",
        "Regulation %",
        &s::REGULATION_PCT,
        NameplateForm,
    ),
    number("Transformer", "Rated VA", &s::RATED_VA, HasTransformer),
    number(
        "Transformer",
        "Secondary ohm",
        &s::SECONDARY_OHMS,
        HasTransformer,
    ),
    number(
        "Transformer",
        "Primary ohm",
        &s::PRIMARY_OHMS,
        HasTransformer,
    ),
    number(
        "Transformer",
        "Ratio spread %",
        &s::RATIO_PCT,
        HasTransformer,
    ),
    number("Transformer", "Leakage mH", &s::LEAKAGE_MH, HasTransformer),
    number(
        "Transformer",
        "Impedance %",
        &s::IMPEDANCE_PCT,
        HasTransformer,
    ),
    choice(
        "Rectifier",
        "Topology",
        "rectifier.topology",
        Choice::Topology,
        "half-wave, center-tap, bridge, doubler, split-rail, three-phase-bridge or \
         three-phase-star (a three-phase one sets the mains to three phases)",
    ),
    choice(
        "Rectifier",
        "Diode",
        "rectifier.diode",
        Choice::Diode,
        "a preset (three rectifier-valve classes among them), or your own law: a fixed \
         drop, a Shockley junction, or a valve's plate drop at a current",
    ),
    number("Rectifier", "Drop V", &s::DROP_V, FixedDiode),
    number("Rectifier", "Drop ohm", &s::DIODE_OHMS, FixedDiode),
    number("Rectifier", "IS A", &s::IS_A, JunctionDiode),
    number("Rectifier", "Emission N", &s::EMISSION_N, JunctionDiode),
    number("Rectifier", "RS ohm", &s::RS_OHMS, JunctionDiode),
    number("Rectifier", "Plate drop V", &s::VALVE_DROP_V, ValveDiode),
    number("Rectifier", "Drop at A", &s::VALVE_AT_A, ValveDiode),
    number("Rectifier", "Junction degC", &s::TEMP_C, Always),
    number("Rectifier", "Drop spread %", &s::DROP_SPREAD_PCT, Always),
    number("Rectifier", "Rated PIV V", &s::RATED_PIV_V, Always),
    number("Rectifier", "Rated A", &s::DIODE_RATED_A, Always),
    number("Rectifier", "Surge A", &s::SURGE_A, Always),
    number("Rectifier", "Max 1st cap uF", &s::MAX_FIRST_UF, Valve),
    number("Rectifier", "Min plate ohm", &s::MIN_PLATE_OHMS, Valve),
    number("Rectifier", "Peak plate A", &s::RATED_PEAK_A, Always),
    number("Rectifier", "Rated DC A", &s::RATED_DC_A, Always),
    choice(
        "Filter",
        "Kind",
        "filter.kind",
        Choice::FilterKind,
        "none, a capacitor, a CRC (capacitor, resistor, capacitor), a choke input (lc) or \
         a CLC pi (capacitor, choke, capacitor)",
    ),
    number("Filter", "Cap uF", &s::FILTER_UF, Filtered),
    number("Filter", "ESR ohm", &s::ESR_OHMS, Filtered),
    number("Filter", "Cap low %", &s::CAP_LOW_PCT, Filtered),
    number("Filter", "Cap high %", &s::CAP_HIGH_PCT, Filtered),
    number("Filter", "Cap rated V", &s::CAP_RATED_V, Filtered),
    number("Filter", "Ripple rated A", &s::RATED_RIPPLE_A, Filtered),
    number("Filter", "Aged %", &s::AGED_PCT, Filtered),
    number("Filter", "Bleeder ohm", &s::BLEEDER_OHMS, Filtered),
    number("Filter", "CRC R ohm", &s::SERIES_OHMS, Crc),
    number("Filter", "2nd cap uF", &s::SECOND_UF, SecondStage),
    number("Filter", "Choke H", &s::CHOKE_H, Choke),
    number("Filter", "Choke ohm", &s::CHOKE_OHMS, Choke),
    number("Filter", "Swing light H", &s::CHOKE_LIGHT_H, Choke),
    number("Filter", "Swing rated A", &s::CHOKE_RATED_A, Choke),
    choice(
        "Load",
        "Kind",
        "load.kind",
        Choice::LoadKind,
        "a resistance (ohms), a constant current (amps), or a constant power (watts: a \
         converter behind the capacitor)",
    ),
    number("Load", "Ohms", &s::LOAD_OHMS, ResistiveLoad),
    number("Load", "Min ohms", &s::MIN_OHMS, ResistiveLoad),
    number("Load", "Max ohms", &s::MAX_OHMS, ResistiveLoad),
    number("Load", "Amps", &s::LOAD_AMPS, CurrentLoad),
    number("Load", "Min amps", &s::MIN_AMPS, CurrentLoad),
    number("Load", "Max amps", &s::MAX_AMPS, CurrentLoad),
    number("Load", "Watts", &s::LOAD_WATTS, PowerLoad),
    number("Load", "Cutoff V", &s::CUTOFF_V, PowerLoad),
    choice(
        "Regulator",
        "Regulator",
        "regulator.kind",
        Choice::Regulator,
        "none, or a linear regulator after the filter",
    ),
    number("Regulator", "Output V", &s::OUTPUT_V, Regulated),
    number("Regulator", "Dropout V", &s::DROPOUT_V, Regulated),
    number("Regulator", "Rated W", &s::REGULATOR_RATED_W, Regulated),
];

/// The row of `path`, if the form has one.
pub fn row(path: &str) -> Option<&'static Field> {
    FIELDS.iter().find(|f| f.path == path)
}

/// Where the row of `path` stands in [`FIELDS`].
pub fn index_of(path: &str) -> Option<usize> {
    FIELDS.iter().position(|f| f.path == path)
}

/// How a line break of the notes shows on the form's one line.
const NEWLINE: &str = " | ";

/// The diode row's words: the presets, then the two laws a technician can give.
fn diode_words() -> Vec<&'static str> {
    let mut words: Vec<&str> = crate::circuit::diode::PRESETS
        .iter()
        .map(|p| p.name)
        .collect();
    words.extend(["fixed drop", "junction", "valve"]);
    words
}

/// A change the form made, ready to apply.
#[derive(Debug, Clone, PartialEq)]
pub struct Change {
    pub supply: Supply,
    /// Values the change drops, as `key = value`: the form asks before applying it.
    pub drops: Vec<String>,
}

impl Field {
    /// Whether the row takes one of a few words.
    pub fn is_choice(&self) -> bool {
        matches!(self.edit, Edit::Choice(_))
    }

    /// Whether the row applies to `s`.
    pub fn applies(&self, s: &Supply) -> bool {
        let filtered = s.filter.kind != FilterKind::None;
        match self.when {
            Always => true,
            LineMatters => s.transformer.is_absent() || s.mains.phases == 3 || s.line.is_some(),
            RatioForm => s.transformer.ratio.is_some(),
            NameplateForm => s.transformer.ratio.is_none() && !s.transformer.is_absent(),
            HasTransformer => !s.transformer.is_absent(),
            Filtered => filtered,
            Crc => s.filter.kind == FilterKind::Crc,
            SecondStage => s.filter.kind.has_second_stage(),
            Choke => s.filter.kind.has_choke(),
            FixedDiode => matches!(s.rectifier.diode, DiodeSpec::Fixed { .. }),
            JunctionDiode => matches!(s.rectifier.diode, DiodeSpec::Junction { .. }),
            ValveDiode => matches!(s.rectifier.diode, DiodeSpec::Valve { .. }),
            Valve => s.has_valve_rectifier(),
            CurrentLoad => s.load.amps.is_some(),
            ResistiveLoad => s.load.amps.is_none() && s.load.watts.is_none(),
            PowerLoad => s.load.watts.is_some(),
            Regulated => s.regulator.is_some(),
        }
    }

    /// The help line: what the row is, and for a number its allowed range and why.
    pub fn help_line(&self) -> String {
        match self.edit {
            Edit::Number(r) => format!("{}: {}; {}", self.path, r.allowed(), r.why),
            _ => format!("{}: {}", self.path, self.help),
        }
    }

    /// The value as the form shows it ("-" when the file leaves it out).
    pub fn show(&self, s: &Supply) -> String {
        match self.edit {
            // One line on the form: a note's line breaks show as " | ", and typing " | "
            // makes one.
            Edit::Text { .. } => match self.path {
                "name" => s.name.clone(),
                "site" => s.site.clone().unwrap_or_default(),
                _ => s.notes.trim_end().replace('\n', NEWLINE),
            },
            Edit::Choice(c) => choice_word(c, s),
            Edit::Number(_) => match value_at(s, self.path) {
                Some(toml::Value::Float(x)) => format_number(x),
                Some(toml::Value::Integer(i)) => i.to_string(),
                _ => match self.path {
                    // Shown for what it is worth: the ratio the nameplate gives.
                    "transformer.ratio" => s
                        .winding()
                        .map(|w| format!("{} (nameplate)", format_number(w.ratio)))
                        .unwrap_or_else(|_| "-".into()),
                    // The leakage a short-circuit test or the percent impedance gives, so a
                    // file with one does not read as having none.
                    "transformer.leakage_mh" => {
                        let from = if s.transformer.short_test.is_some() {
                            "short_test"
                        } else if s.transformer.impedance_pct.is_some() {
                            "impedance %"
                        } else {
                            return "-".into();
                        };
                        s.winding()
                            .map(|w| {
                                format!("{} ({from})", crate::units::format_si(w.leakage_h, "H"))
                            })
                            .unwrap_or_else(|_| "-".into())
                    }
                    _ => "-".into(),
                },
            },
        }
    }

    /// The words a choice row cycles through; empty for other rows.
    pub fn words(&self) -> Vec<&'static str> {
        match self.edit {
            Edit::Choice(Choice::Topology) => Topology::ALL.iter().map(|t| t.key()).collect(),
            Edit::Choice(Choice::Diode) => diode_words(),
            Edit::Choice(Choice::FilterKind) => FilterKind::ALL.iter().map(|k| k.key()).collect(),
            Edit::Choice(Choice::TransformerForm) => vec!["ratio", "nameplate", "none"],
            Edit::Choice(Choice::LoadKind) => vec!["resistance", "current", "power"],
            Edit::Choice(Choice::Regulator) => vec!["none", "linear"],
            _ => Vec::new(),
        }
    }

    /// The next (or previous) word of a choice row.
    pub fn cycle(&self, s: &Supply, forward: bool) -> Option<&'static str> {
        let words = self.words();
        if words.is_empty() {
            return None;
        }
        let now = self.show(s);
        let i = words.iter().position(|w| *w == now).unwrap_or(0);
        let n = words.len();
        Some(
            words[if forward {
                (i + 1) % n
            } else {
                (i + n - 1) % n
            }],
        )
    }

    /// The supply with this row set from `text` (validated), and the values that would drop;
    /// the reason, naming the key, the value and the range, if refused. The row's key is no
    /// longer a guess once set; values a choice fills in are guesses until set.
    pub fn apply(&self, s: &Supply, text: &str) -> Result<Change, String> {
        let text = text.trim();
        let mut out = s.clone();
        let mut drops = Vec::new();
        let mut guesses: Vec<&'static str> = Vec::new();
        match self.edit {
            Edit::Text { required } => {
                if required && text.is_empty() {
                    return Err(format!("{} cannot be empty", self.path));
                }
                match self.path {
                    "name" => out.name = text.to_string(),
                    "site" => out.site = (!text.is_empty()).then(|| text.to_string()),
                    _ => out.notes = text.replace(NEWLINE, "\n"),
                }
            }
            Edit::Number(range) => {
                let clear = text.is_empty() || text == "-";
                let value = if clear {
                    None
                } else {
                    let v = parse_si(text).map_err(|e| format!("{}: {e}", self.path))?;
                    // Microfarad keys read a prefix as farads ("2m2" = 2200 uF).
                    let prefixed = text
                        .chars()
                        .any(|c| c.is_alphabetic() && c != 'e' && c != 'E');
                    // The range is checked by the validator below, in its own words.
                    Some(if range.unit == "uF" && prefixed {
                        v * 1e6
                    } else {
                        v
                    })
                };
                out = set_number(&out, self.path, value)?;
            }
            Edit::Choice(c) => {
                if !self.words().contains(&text) {
                    return Err(format!(
                        "{} must be one of {} (got {text:?})",
                        self.path,
                        self.words().join(", ")
                    ));
                }
                choose(c, &mut out, text, &mut drops, &mut guesses)?;
            }
        }
        out.unconfirmed.retain(|p| p != self.path);
        // A guess whose key the change dropped (the ratio, once the nameplate is chosen) is
        // no longer there to confirm. One the file keeps while its row does not apply (a
        // guessed choke while the filter is switched to a capacitor and back) stays a guess.
        let mut unconfirmed = std::mem::take(&mut out.unconfirmed);
        unconfirmed.retain(|p| {
            row(p).is_none_or(|f| match f.edit {
                Edit::Number(_) => value_at(&out, f.path).is_some(),
                Edit::Text { .. } | Edit::Choice(_) => f.applies(&out) && f.show(&out) != "-",
            })
        });
        out.unconfirmed = unconfirmed;
        for g in guesses {
            if !out.unconfirmed.iter().any(|p| p == g) {
                out.unconfirmed.push(g.to_string());
            }
        }
        out.validate().map_err(|e| e.to_string())?;
        Ok(Change { supply: out, drops })
    }
}

/// The word a choice row shows for `s`.
fn choice_word(c: Choice, s: &Supply) -> String {
    match c {
        Choice::Topology => s.rectifier.topology.key().into(),
        Choice::Diode => match &s.rectifier.diode {
            DiodeSpec::Preset(p) => p.clone(),
            DiodeSpec::Fixed { .. } => "fixed drop".into(),
            DiodeSpec::Junction { .. } => "junction".into(),
            DiodeSpec::Valve { .. } => "valve".into(),
        },
        Choice::FilterKind => s.filter.kind.key().into(),
        Choice::TransformerForm => if s.transformer.is_absent() {
            "none"
        } else if s.transformer.ratio.is_some() {
            "ratio"
        } else {
            "nameplate"
        }
        .into(),
        Choice::LoadKind => if s.load.amps.is_some() {
            "current"
        } else if s.load.watts.is_some() {
            "power"
        } else {
            "resistance"
        }
        .into(),
        Choice::Regulator => if s.regulator.is_some() {
            "linear"
        } else {
            "none"
        }
        .into(),
    }
}

/// `key = value` for a value about to be dropped.
fn dropped(key: &str, v: Option<f64>) -> Option<String> {
    v.map(|v| format!("{key} = {}", format_number(v)))
}

/// Sets choice `c` of `out` to `word`, noting what drops and what is filled in as a guess.
fn choose(
    c: Choice,
    out: &mut Supply,
    word: &str,
    drops: &mut Vec<String>,
    guesses: &mut Vec<&'static str>,
) -> Result<(), String> {
    match c {
        Choice::Topology => {
            out.rectifier.topology = Topology::ALL
                .iter()
                .copied()
                .find(|t| t.key() == word)
                .expect("a listed word");
            // A three-phase rectifier needs three-phase mains and the reverse: the mains
            // follow the choice (the voltage stays, to be confirmed as line to line).
            let phases = out.rectifier.topology.phases();
            if out.mains.phases != phases {
                out.mains.phases = phases;
                guesses.push("mains.vrms");
            }
        }
        Choice::Diode => {
            out.rectifier.diode = match (word, &out.rectifier.diode) {
                ("fixed drop", d @ DiodeSpec::Fixed { .. }) => d.clone(),
                ("junction", d @ DiodeSpec::Junction { .. }) => d.clone(),
                ("valve", d @ DiodeSpec::Valve { .. }) => d.clone(),
                ("valve", _) => {
                    // The medium class's typical point (practice), to be read off the sheet.
                    guesses.extend(["rectifier.diode.drop_v", "rectifier.diode.at_a"]);
                    DiodeSpec::Valve {
                        law: (),
                        drop_v: 45.0,
                        at_a: 0.225,
                    }
                }
                ("fixed drop", _) => {
                    // A silicon rectifier's usual 0.7 V (practice), to be measured.
                    guesses.extend(["rectifier.diode.drop_v", "rectifier.diode.ohms"]);
                    DiodeSpec::Fixed {
                        drop_v: 0.7,
                        ohms: 0.0,
                    }
                }
                ("junction", _) => {
                    // The silicon preset's own law, as a start.
                    guesses.extend([
                        "rectifier.diode.is_a",
                        "rectifier.diode.n",
                        "rectifier.diode.rs_ohms",
                    ]);
                    DiodeSpec::Junction {
                        is_a: 7.0e-9,
                        n: 1.8,
                        rs_ohms: 0.034,
                    }
                }
                (preset, _) => DiodeSpec::Preset(preset.to_string()),
            };
        }
        Choice::FilterKind => {
            out.filter.kind = FilterKind::ALL
                .into_iter()
                .find(|k| k.key() == word)
                .expect("a listed word");
            if out.filter.kind != FilterKind::None && out.filter.uf.is_none() {
                out.filter.uf = Some(1000.0);
                guesses.push("filter.uf");
            }
            if out.filter.kind == FilterKind::Crc && out.filter.series_ohms.is_none() {
                out.filter.series_ohms = Some(10.0);
                guesses.push("filter.series_ohms");
            }
            if out.filter.kind.has_second_stage() && out.filter.second_uf.is_none() {
                out.filter.second_uf = out.filter.uf;
                guesses.push("filter.second_uf");
            }
            if out.filter.kind.has_choke() && out.filter.choke_h.is_none() {
                // Twice the critical inductance at the stated load, and a choke's copper of
                // about 2 % of the load's resistance: guesses until read off the part.
                let (henries, ohms) = crate::analysis::choke_guess(out);
                out.filter.choke_h = Some(henries);
                out.filter.choke_ohms = out.filter.choke_ohms.or(Some(ohms));
                guesses.extend(["filter.choke_h", "filter.choke_ohms"]);
            }
        }
        Choice::TransformerForm => {
            // Straight off the line: every transformer value goes.
            if word == "none" {
                if !out.transformer.is_absent() {
                    let text = toml::to_string(&out.transformer).unwrap_or_default();
                    drops.extend(
                        text.lines()
                            .filter(|l| !l.trim().is_empty())
                            .map(|l| format!("transformer.{}", l.trim())),
                    );
                    out.transformer = crate::supply::Transformer::default();
                }
                return Ok(());
            }
            // From none: a 1:1 ratio to start from, a guess until set.
            if out.transformer.is_absent() {
                out.transformer.ratio = Some(1.0);
                guesses.push("transformer.ratio");
                if word == "ratio" {
                    return Ok(());
                }
            }
            let t = &mut out.transformer;
            match (word, t.ratio) {
                ("ratio", None) => {
                    // The ratio the nameplate works out to; the nameplate's values drop.
                    let w = out.winding().map_err(|e| e.to_string())?;
                    let t = &mut out.transformer;
                    drops.extend(
                        [
                            dropped("transformer.primary_vrms", t.primary_vrms.take()),
                            dropped("transformer.secondary_vrms", t.secondary_vrms.take()),
                            dropped("transformer.regulation_pct", t.regulation_pct.take()),
                        ]
                        .into_iter()
                        .flatten(),
                    );
                    t.ratio = Some((w.ratio * 1000.0).round() / 1000.0);
                }
                ("nameplate", Some(ratio)) => {
                    // The nameplate that ratio means at the nominal mains, with a small
                    // transformer's usual regulation: guesses until read off the plate.
                    drops.extend(dropped("transformer.ratio", Some(ratio)));
                    let mains = out.mains.vrms;
                    let t = &mut out.transformer;
                    t.ratio = None;
                    t.primary_vrms = Some(mains);
                    let regulation = 10.0;
                    t.secondary_vrms =
                        Some((mains / ratio / (1.0 + regulation / 100.0) * 100.0).round() / 100.0);
                    t.regulation_pct = Some(regulation);
                    guesses.extend([
                        "transformer.primary_vrms",
                        "transformer.secondary_vrms",
                        "transformer.regulation_pct",
                    ]);
                }
                _ => {}
            }
        }
        Choice::LoadKind => {
            let rail = crate::circuit::solve_nominal(out)
                .map(|(op, _)| op.figures.dc_v)
                .unwrap_or(0.0);
            let l = &mut out.load;
            // Constant power: from either kind, the watts the load draws at the working rail.
            if word == "power" && l.watts.is_none() {
                let amps = l
                    .amps
                    .or_else(|| l.ohms.map(|r| if rail > 0.0 { rail / r } else { 0.0 }))
                    .unwrap_or(0.0);
                drops.extend(
                    [
                        dropped("load.amps", l.amps.take()),
                        dropped("load.min_amps", l.min_amps.take()),
                        dropped("load.max_amps", l.max_amps.take()),
                        dropped("load.ohms", l.ohms.take()),
                        dropped("load.min_ohms", l.min_ohms.take()),
                        dropped("load.max_ohms", l.max_ohms.take()),
                    ]
                    .into_iter()
                    .flatten(),
                );
                let watts = if rail > 0.0 && amps > 0.0 {
                    rail * amps
                } else {
                    10.0
                };
                l.watts = Some((watts * 100.0).round() / 100.0);
                guesses.push("load.watts");
                return Ok(());
            }
            // From constant power back to a current or a resistance: its current at the rail.
            if word != "power"
                && let Some(watts) = l.watts.take()
            {
                drops.extend(
                    [
                        dropped("load.watts", Some(watts)),
                        dropped("load.cutoff_v", l.cutoff_v.take()),
                    ]
                    .into_iter()
                    .flatten(),
                );
                let amps = if rail > 0.0 { watts / rail } else { 0.1 };
                if word == "current" {
                    l.amps = Some((amps * 1e4).round() / 1e4);
                    guesses.push("load.amps");
                } else {
                    let ohms = if amps > 0.0 { rail / amps } else { 100.0 };
                    l.ohms = Some((ohms * 100.0).round() / 100.0);
                    guesses.push("load.ohms");
                }
                return Ok(());
            }
            match (word, l.amps, l.ohms) {
                ("current", None, Some(ohms)) => {
                    drops.extend(
                        [
                            dropped("load.ohms", Some(ohms)),
                            dropped("load.min_ohms", l.min_ohms.take()),
                            dropped("load.max_ohms", l.max_ohms.take()),
                        ]
                        .into_iter()
                        .flatten(),
                    );
                    l.ohms = None;
                    // The current the resistance draws at the working rail.
                    let amps = if rail > 0.0 { rail / ohms } else { 0.1 };
                    l.amps = Some((amps * 1e4).round() / 1e4);
                    guesses.push("load.amps");
                }
                ("resistance", Some(amps), None) => {
                    drops.extend(
                        [
                            dropped("load.amps", Some(amps)),
                            dropped("load.min_amps", l.min_amps.take()),
                            dropped("load.max_amps", l.max_amps.take()),
                        ]
                        .into_iter()
                        .flatten(),
                    );
                    l.amps = None;
                    let ohms = if rail > 0.0 && amps > 0.0 {
                        rail / amps
                    } else {
                        100.0
                    };
                    l.ohms = Some((ohms * 100.0).round() / 100.0);
                    guesses.push("load.ohms");
                }
                _ => {}
            }
        }
        Choice::Regulator => match (word, &out.regulator) {
            ("none", Some(r)) => {
                drops.extend(
                    [
                        dropped("regulator.output_v", Some(r.output_v)),
                        dropped("regulator.dropout_v", Some(r.dropout_v)),
                        dropped("regulator.rated_w", r.rated_w),
                    ]
                    .into_iter()
                    .flatten(),
                );
                out.regulator = None;
            }
            ("linear", None) => {
                // A common 5 V part with the usual 2 V dropout of a 78xx (practice).
                out.regulator = Some(Regulator {
                    output_v: 5.0,
                    dropout_v: 2.0,
                    rated_w: None,
                });
                guesses.extend(["regulator.output_v", "regulator.dropout_v"]);
            }
            _ => {}
        },
    }
    Ok(())
}

/// The section of the supply a key path starts with, as a TOML table.
fn section(s: &Supply, name: &str) -> Option<toml::Value> {
    match name {
        "mains" => toml::Value::try_from(&s.mains).ok(),
        "transformer" => toml::Value::try_from(&s.transformer).ok(),
        "rectifier" => toml::Value::try_from(&s.rectifier).ok(),
        "filter" => toml::Value::try_from(&s.filter).ok(),
        "load" => toml::Value::try_from(&s.load).ok(),
        "line" => Some(
            s.line
                .as_ref()
                .and_then(|l| toml::Value::try_from(l).ok())
                .unwrap_or_else(|| toml::Value::Table(toml::Table::new())),
        ),
        "regulator" => s
            .regulator
            .as_ref()
            .and_then(|r| toml::Value::try_from(r).ok()),
        _ => None,
    }
}

/// Puts a section back into the supply, refusing what the file format would refuse.
fn put_section(s: &mut Supply, name: &str, v: toml::Value) -> Result<(), String> {
    let why = |e: toml::de::Error| format!("{name}: {}", e.message());
    match name {
        "mains" => s.mains = v.try_into().map_err(why)?,
        "transformer" => s.transformer = v.try_into().map_err(why)?,
        "rectifier" => s.rectifier = v.try_into().map_err(why)?,
        "filter" => s.filter = v.try_into().map_err(why)?,
        "load" => s.load = v.try_into().map_err(why)?,
        // An emptied line table is no line table.
        "line" => {
            let line: crate::supply::Line = v.try_into().map_err(why)?;
            s.line = (line != crate::supply::Line::default()).then_some(line);
        }
        "regulator" => s.regulator = Some(v.try_into().map_err(why)?),
        other => return Err(format!("{other} is not a section the form edits")),
    }
    Ok(())
}

/// The value at a key path (`filter.uf`, `rectifier.diode.drop_v`), if the file has one.
fn value_at(s: &Supply, path: &str) -> Option<toml::Value> {
    let mut parts = path.split('.');
    let mut v = section(s, parts.next()?)?;
    for p in parts {
        v = v.get(p)?.clone();
    }
    Some(v)
}

/// The supply with the number at `path` set, or removed (the file's default then applies;
/// a key the file must have is refused by the caller's validation, naming it).
fn set_number(s: &Supply, path: &str, value: Option<f64>) -> Result<Supply, String> {
    let mut parts: Vec<&str> = path.split('.').collect();
    let name = parts.remove(0);
    let mut root = section(s, name).unwrap_or_else(|| toml::Value::Table(toml::Table::new()));
    let (last, inner) = parts.split_last().ok_or("a key path names a section")?;
    let mut table = &mut root;
    for p in inner {
        table = table
            .as_table_mut()
            .ok_or_else(|| format!("{path}: not a table"))?
            .entry(p.to_string())
            .or_insert_with(|| toml::Value::Table(toml::Table::new()));
    }
    let t = table
        .as_table_mut()
        .ok_or_else(|| format!("{path}: not a table"))?;
    match value {
        Some(v) => {
            t.insert(last.to_string(), toml::Value::Float(v));
        }
        None => {
            t.remove(*last);
        }
    }
    let mut out = s.clone();
    put_section(&mut out, name, root).map_err(|e| {
        if value.is_none() {
            format!("{path} cannot be left out: the file needs it ({e})")
        } else {
            e
        }
    })?;
    Ok(out)
}
