//! The form's fields: how each shows a supply's value and how a typed text is applied to it.
//! Values are typed in engineering notation (`4k7`, `47u`, `2m2`); a bad one is refused with
//! the reason and never applied.

use crate::supply::{DiodeSpec, FilterKind, Regulator, Supply, Topology};
use crate::units::parse_si;

/// One editable line of the form.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Field {
    pub group: &'static str,
    pub label: &'static str,
    pub key: Key,
}

/// What a field edits.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Key {
    Name,
    MainsVrms,
    MainsHz,
    MainsLowPct,
    MainsHighPct,
    Crest,
    Ratio,
    SecondaryOhms,
    PrimaryOhms,
    Topology,
    Diode,
    FilterKind,
    Uf,
    EsrOhms,
    CapLowPct,
    CapHighPct,
    RatedV,
    SeriesOhms,
    SecondUf,
    LoadAmps,
    LoadOhms,
    RegulatorOutput,
    RegulatorDropout,
}

/// The form, in its groups: mains, transformer, rectifier, filter, load, regulator.
pub const FIELDS: [Field; 23] = [
    Field {
        group: "Supply",
        label: "Name",
        key: Key::Name,
    },
    Field {
        group: "Mains",
        label: "RMS volts",
        key: Key::MainsVrms,
    },
    Field {
        group: "Mains",
        label: "Frequency Hz",
        key: Key::MainsHz,
    },
    Field {
        group: "Mains",
        label: "Low %",
        key: Key::MainsLowPct,
    },
    Field {
        group: "Mains",
        label: "High %",
        key: Key::MainsHighPct,
    },
    Field {
        group: "Mains",
        label: "Crest pk/RMS",
        key: Key::Crest,
    },
    Field {
        group: "Transformer",
        label: "Ratio pri:sec",
        key: Key::Ratio,
    },
    Field {
        group: "Transformer",
        label: "Secondary ohm",
        key: Key::SecondaryOhms,
    },
    Field {
        group: "Transformer",
        label: "Primary ohm",
        key: Key::PrimaryOhms,
    },
    Field {
        group: "Rectifier",
        label: "Topology",
        key: Key::Topology,
    },
    Field {
        group: "Rectifier",
        label: "Diode",
        key: Key::Diode,
    },
    Field {
        group: "Filter",
        label: "Kind",
        key: Key::FilterKind,
    },
    Field {
        group: "Filter",
        label: "Cap uF",
        key: Key::Uf,
    },
    Field {
        group: "Filter",
        label: "ESR ohms",
        key: Key::EsrOhms,
    },
    Field {
        group: "Filter",
        label: "Cap low %",
        key: Key::CapLowPct,
    },
    Field {
        group: "Filter",
        label: "Cap high %",
        key: Key::CapHighPct,
    },
    Field {
        group: "Filter",
        label: "Cap rated V",
        key: Key::RatedV,
    },
    Field {
        group: "Filter",
        label: "CRC R ohm",
        key: Key::SeriesOhms,
    },
    Field {
        group: "Filter",
        label: "CRC 2nd uF",
        key: Key::SecondUf,
    },
    Field {
        group: "Load",
        label: "Amps (const.)",
        key: Key::LoadAmps,
    },
    Field {
        group: "Load",
        label: "Ohms (resist.)",
        key: Key::LoadOhms,
    },
    Field {
        group: "Regulator",
        label: "Output V",
        key: Key::RegulatorOutput,
    },
    Field {
        group: "Regulator",
        label: "Dropout V",
        key: Key::RegulatorDropout,
    },
];

const DIODES: [&str; 4] = ["silicon", "fast", "schottky", "ideal"];
const KINDS: [(FilterKind, &str); 3] = [
    (FilterKind::None, "none"),
    (FilterKind::Capacitor, "capacitor"),
    (FilterKind::Crc, "crc"),
];

fn num(v: Option<f64>) -> String {
    match v {
        Some(x) => format!("{x}"),
        None => "-".into(),
    }
}

impl Key {
    /// Whether the field takes one of a few words, cycled with Left and Right.
    pub fn is_choice(self) -> bool {
        matches!(self, Key::Topology | Key::Diode | Key::FilterKind)
    }

    /// The value as the form shows it.
    pub fn show(self, s: &Supply) -> String {
        match self {
            Key::Name => s.name.clone(),
            Key::MainsVrms => num(Some(s.mains.vrms)),
            Key::MainsHz => num(Some(s.mains.hz)),
            Key::MainsLowPct => num(Some(s.mains.low_pct)),
            Key::MainsHighPct => num(Some(s.mains.high_pct)),
            Key::Crest => match s.mains.crest {
                Some(c) => format!("{c:.3}"),
                None => "-".into(),
            },
            Key::Ratio => match s.winding() {
                Ok(w) if s.transformer.ratio.is_none() => format!("{:.3} (nameplate)", w.ratio),
                _ => num(s.transformer.ratio),
            },
            Key::SecondaryOhms => num(s.transformer.secondary_ohms),
            Key::PrimaryOhms => num(s.transformer.primary_ohms),
            Key::Topology => s.rectifier.topology.key().into(),
            Key::Diode => match &s.rectifier.diode {
                DiodeSpec::Preset(p) => p.clone(),
                DiodeSpec::Fixed { drop_v, ohms } => format!("{drop_v} V + {ohms} ohm"),
                DiodeSpec::Junction { is_a, n, rs_ohms } => {
                    format!("IS {is_a:e} N {n} RS {rs_ohms}")
                }
            },
            Key::FilterKind => KINDS
                .iter()
                .find(|(k, _)| *k == s.filter.kind)
                .map(|(_, w)| w.to_string())
                .unwrap_or_default(),
            Key::Uf => num(s.filter.uf),
            Key::EsrOhms => num(Some(s.filter.esr_ohms)),
            Key::CapLowPct => num(Some(s.filter.low_pct)),
            Key::CapHighPct => num(Some(s.filter.high_pct)),
            Key::RatedV => num(s.filter.rated_v),
            Key::SeriesOhms => num(s.filter.series_ohms),
            Key::SecondUf => num(s.filter.second_uf),
            Key::LoadAmps => num(s.load.amps),
            Key::LoadOhms => num(s.load.ohms),
            Key::RegulatorOutput => num(s.regulator.as_ref().map(|r| r.output_v)),
            Key::RegulatorDropout => num(s.regulator.as_ref().map(|r| r.dropout_v)),
        }
    }

    /// The supply with this field set from `text`, validated; the reason if refused.
    pub fn apply(self, s: &Supply, text: &str) -> Result<Supply, String> {
        let mut out = s.clone();
        let text = text.trim();
        let clear = text.is_empty() || text == "-";
        let value = || parse_si(text).map_err(|e| e.to_string());
        // Microfarad fields read a prefix as farads ("2m2" = 2200 uF) and a bare number as uF.
        let microfarads = || -> Result<f64, String> {
            let has_prefix = text
                .chars()
                .any(|c| c.is_alphabetic() && c != 'e' && c != 'E');
            let v = value()?;
            Ok(if has_prefix { v * 1e6 } else { v })
        };
        match self {
            Key::Name => out.name = text.to_string(),
            Key::MainsVrms => out.mains.vrms = value()?,
            Key::MainsHz => out.mains.hz = value()?,
            Key::MainsLowPct => out.mains.low_pct = value()?,
            Key::MainsHighPct => out.mains.high_pct = value()?,
            Key::Crest => out.mains.crest = Some(value()?),
            Key::Ratio => {
                out.transformer.ratio = Some(value()?);
                out.transformer.primary_vrms = None;
                out.transformer.secondary_vrms = None;
                out.transformer.regulation_pct = None;
            }
            Key::SecondaryOhms => {
                out.transformer.secondary_ohms = if clear { None } else { Some(value()?) }
            }
            Key::PrimaryOhms => {
                out.transformer.primary_ohms = if clear { None } else { Some(value()?) }
            }
            Key::Topology => {
                out.rectifier.topology = Topology::ALL
                    .iter()
                    .copied()
                    .find(|t| t.key() == text)
                    .ok_or_else(|| {
                        format!(
                            "topology must be half-wave, center-tap, bridge, doubler or split-rail (got {text:?})"
                        )
                    })?
            }
            Key::Diode => {
                if !DIODES.contains(&text) {
                    return Err(format!(
                        "diode must be silicon, fast, schottky or ideal here (got {text:?}); \
                         edit the file for a custom law"
                    ));
                }
                out.rectifier.diode = DiodeSpec::Preset(text.to_string());
            }
            Key::FilterKind => {
                out.filter.kind = KINDS
                    .iter()
                    .find(|(_, w)| *w == text)
                    .map(|(k, _)| *k)
                    .ok_or_else(|| format!("kind must be none, capacitor or crc (got {text:?})"))?;
                if out.filter.kind != FilterKind::None && out.filter.uf.is_none() {
                    out.filter.uf = Some(1000.0);
                }
                if out.filter.kind == FilterKind::Crc {
                    out.filter.series_ohms.get_or_insert(10.0);
                    out.filter.second_uf.get_or_insert(out.filter.uf.unwrap_or(1000.0));
                }
            }
            Key::Uf => out.filter.uf = Some(microfarads()?),
            Key::EsrOhms => out.filter.esr_ohms = if clear { 0.0 } else { value()? },
            Key::CapLowPct => out.filter.low_pct = value()?,
            Key::CapHighPct => out.filter.high_pct = value()?,
            Key::RatedV => out.filter.rated_v = if clear { None } else { Some(value()?) },
            Key::SeriesOhms => out.filter.series_ohms = if clear { None } else { Some(value()?) },
            Key::SecondUf => out.filter.second_uf = if clear { None } else { Some(microfarads()?) },
            Key::LoadAmps => {
                out.load.amps = Some(value()?);
                out.load.ohms = None;
                out.load.min_ohms = None;
                out.load.max_ohms = None;
            }
            Key::LoadOhms => {
                out.load.ohms = Some(value()?);
                out.load.amps = None;
                out.load.min_amps = None;
                out.load.max_amps = None;
            }
            Key::RegulatorOutput | Key::RegulatorDropout => {
                if clear {
                    out.regulator = None;
                } else {
                    let v = value()?;
                    let reg = out.regulator.get_or_insert(Regulator {
                        output_v: 5.0,
                        dropout_v: 2.0,
                        rated_w: None,
                    });
                    if self == Key::RegulatorOutput {
                        reg.output_v = v;
                    } else {
                        reg.dropout_v = v;
                    }
                }
            }
        }
        out.validate().map_err(|e| e.to_string())?;
        Ok(out)
    }

    /// The next (or previous) word of a choice field.
    pub fn cycle(self, s: &Supply, forward: bool) -> Option<String> {
        let words: Vec<&str> = match self {
            Key::Topology => Topology::ALL.iter().map(|t| t.key()).collect(),
            Key::Diode => DIODES.to_vec(),
            Key::FilterKind => KINDS.iter().map(|(_, w)| *w).collect(),
            _ => return None,
        };
        let now = self.show(s);
        let i = words.iter().position(|w| *w == now).unwrap_or(0);
        let n = words.len();
        let j = if forward {
            (i + 1) % n
        } else {
            (i + n - 1) % n
        };
        Some(words[j].to_string())
    }
}
