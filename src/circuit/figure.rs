//! The one table of figures: each figure's id, its JSON key, its words in the report and on
//! the screen, and its unit. The report, the results panel, the checks, the worst case and the
//! JSON all go through it, so a figure is named once and a check asks for it by id (a typo is a
//! compile error, never a quiet "not rated").

use super::Figures;

/// A figure of a solved supply.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Figure {
    DcV,
    MaxV,
    MinV,
    RipplePpV,
    RippleRmsV,
    RippleHz,
    LoadA,
    DiodePeakA,
    DiodeAvgA,
    DiodeRmsA,
    DiodePivV,
    WindingRmsA,
    WindingPeakA,
    WindingVa,
    CapRippleRmsA,
    ConductionDeg,
    InrushPeakA,
    CapPeakV,
    SecondaryRmsV,
    ChokeRmsA,
    ChokePeakA,
    ChokeDcDropV,
    OutCapRippleRmsA,
}

/// How a supply names its figures in the report and on screen (see [`Figure::words`]),
/// worked out once for a table rather than for each of its rows.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Naming {
    /// The rectifier is a valve: its figures are the valve's.
    pub valve: bool,
    /// No transformer: the winding's figures are the line's.
    pub straight_off_line: bool,
}

impl Naming {
    /// The naming of `supply`'s figures.
    pub fn of(supply: &crate::supply::Supply) -> Naming {
        Naming {
            valve: supply.has_valve_rectifier(),
            straight_off_line: supply.transformer.is_absent(),
        }
    }
}

impl Figure {
    /// Every figure, in the report's order.
    pub const ALL: [Figure; 23] = [
        Figure::DcV,
        Figure::MaxV,
        Figure::MinV,
        Figure::RipplePpV,
        Figure::RippleRmsV,
        Figure::RippleHz,
        Figure::LoadA,
        Figure::DiodePeakA,
        Figure::DiodeAvgA,
        Figure::DiodeRmsA,
        Figure::DiodePivV,
        Figure::WindingRmsA,
        Figure::WindingPeakA,
        Figure::WindingVa,
        Figure::CapRippleRmsA,
        Figure::ConductionDeg,
        Figure::InrushPeakA,
        Figure::CapPeakV,
        Figure::SecondaryRmsV,
        Figure::ChokeRmsA,
        Figure::ChokePeakA,
        Figure::ChokeDcDropV,
        Figure::OutCapRippleRmsA,
    ];

    /// One row of the table: JSON key, the report's words, the screen's short words, unit.
    fn row(self) -> (&'static str, &'static str, &'static str, &'static str) {
        match self {
            Figure::DcV => ("dc_v", "DC (meter, average)", "DC", "V"),
            Figure::MaxV => ("max_v", "Highest", "Crest", "V"),
            Figure::MinV => ("min_v", "Lowest", "Valley", "V"),
            Figure::RipplePpV => ("ripple_pp_v", "Ripple peak-peak", "Ripple p-p", "V"),
            Figure::RippleRmsV => ("ripple_rms_v", "Ripple RMS", "Ripple RMS", "V"),
            Figure::RippleHz => ("ripple_hz", "Ripple frequency", "Ripple Hz", "Hz"),
            Figure::LoadA => ("load_a", "Load current", "Load", "A"),
            Figure::DiodePeakA => ("diode_peak_a", "Diode peak", "Diode peak", "A"),
            Figure::DiodeAvgA => ("diode_avg_a", "Diode average", "Diode avg.", "A"),
            Figure::DiodeRmsA => ("diode_rms_a", "Diode RMS", "Diode RMS", "A"),
            Figure::DiodePivV => ("diode_piv_v", "Diode reverse peak", "Diode rev.", "V"),
            Figure::WindingRmsA => ("winding_rms_a", "Winding RMS", "Winding RMS", "A"),
            Figure::WindingPeakA => ("winding_peak_a", "Winding peak", "Winding pk.", "A"),
            Figure::WindingVa => ("winding_va", "Winding VA", "Winding VA", "VA"),
            Figure::CapRippleRmsA => (
                "cap_ripple_rms_a",
                "Capacitor ripple RMS",
                "Cap ripple",
                "A",
            ),
            Figure::ConductionDeg => (
                "conduction_deg",
                "Conduction per pulse",
                "Conduction",
                "deg",
            ),
            Figure::InrushPeakA => ("inrush_peak_a", "Switch-on surge", "Surge", "A"),
            Figure::CapPeakV => ("cap_peak_v", "Capacitor peak", "Cap peak", "V"),
            Figure::SecondaryRmsV => (
                "secondary_rms_v",
                "Secondary AC (meter)",
                "Secondary AC",
                "V",
            ),
            Figure::ChokeRmsA => ("choke_rms_a", "Choke RMS", "Choke RMS", "A"),
            Figure::ChokePeakA => ("choke_peak_a", "Choke peak", "Choke peak", "A"),
            Figure::ChokeDcDropV => ("choke_dc_drop_v", "Choke DC drop", "Choke drop", "V"),
            Figure::OutCapRippleRmsA => (
                "out_cap_ripple_rms_a",
                "Output cap ripple RMS",
                "Out cap rip.",
                "A",
            ),
        }
    }

    /// The report's and the screen's words under `naming`: a supply with no transformer names
    /// the winding's figures the line's ("Line RMS"), a valve rectifier its rectifier's
    /// figures the valve's ("Valve peak"); the table's words otherwise. The JSON keys stay.
    pub fn words(self, naming: Naming) -> (&'static str, &'static str) {
        let (valve, line) = (naming.valve, naming.straight_off_line);
        match self {
            Figure::DiodePeakA if valve => ("Valve peak", "Valve peak"),
            Figure::DiodeAvgA if valve => ("Valve average", "Valve avg."),
            Figure::DiodeRmsA if valve => ("Valve RMS", "Valve RMS"),
            Figure::DiodePivV if valve => ("Valve reverse peak", "Valve rev."),
            Figure::WindingRmsA if line => ("Line current RMS", "Line RMS"),
            Figure::WindingPeakA if line => ("Line current peak", "Line peak"),
            Figure::WindingVa if line => ("Line VA", "Line VA"),
            Figure::SecondaryRmsV if line => ("Line AC at the rectifier", "Line AC"),
            Figure::DcV
            | Figure::MaxV
            | Figure::MinV
            | Figure::RipplePpV
            | Figure::RippleRmsV
            | Figure::RippleHz
            | Figure::LoadA
            | Figure::DiodePeakA
            | Figure::DiodeAvgA
            | Figure::DiodeRmsA
            | Figure::DiodePivV
            | Figure::WindingRmsA
            | Figure::WindingPeakA
            | Figure::WindingVa
            | Figure::SecondaryRmsV
            | Figure::CapRippleRmsA
            | Figure::ConductionDeg
            | Figure::InrushPeakA
            | Figure::CapPeakV
            | Figure::ChokeRmsA
            | Figure::ChokePeakA
            | Figure::ChokeDcDropV
            | Figure::OutCapRippleRmsA => (self.label(), self.short()),
        }
    }

    /// The key in the JSON and in the worst case's extents (`dc_v`).
    pub fn key(self) -> &'static str {
        self.row().0
    }

    /// The report's words ("Diode reverse peak").
    pub fn label(self) -> &'static str {
        self.row().1
    }

    /// The screen's words, 12 characters at most ("Diode rev.").
    pub fn short(self) -> &'static str {
        self.row().2
    }

    /// The unit (V, A, Hz, VA, deg).
    pub fn unit(self) -> &'static str {
        self.row().3
    }

    /// Whether the supply of `f` has this figure at all: a choke's figures need a choke, the
    /// output capacitor's a second stage. (A switch-on surge nothing limits is still a row,
    /// shown as unlimited.)
    pub fn applies(self, f: &Figures) -> bool {
        match self {
            Figure::ChokeRmsA
            | Figure::ChokePeakA
            | Figure::ChokeDcDropV
            | Figure::OutCapRippleRmsA => self.of(f).is_some(),
            Figure::DcV
            | Figure::MaxV
            | Figure::MinV
            | Figure::RipplePpV
            | Figure::RippleRmsV
            | Figure::RippleHz
            | Figure::LoadA
            | Figure::DiodePeakA
            | Figure::DiodeAvgA
            | Figure::DiodeRmsA
            | Figure::DiodePivV
            | Figure::WindingRmsA
            | Figure::WindingPeakA
            | Figure::WindingVa
            | Figure::CapRippleRmsA
            | Figure::ConductionDeg
            | Figure::InrushPeakA
            | Figure::CapPeakV
            | Figure::SecondaryRmsV => true,
        }
    }

    /// The figure of `key`, if there is one.
    pub fn from_key(key: &str) -> Option<Figure> {
        Figure::ALL.into_iter().find(|f| f.key() == key)
    }

    /// Its value in `f` (None where it does not apply: no surge without resistance).
    pub fn of(self, f: &Figures) -> Option<f64> {
        match self {
            Figure::DcV => Some(f.dc_v),
            Figure::MaxV => Some(f.max_v),
            Figure::MinV => Some(f.min_v),
            Figure::RipplePpV => Some(f.ripple_pp_v),
            Figure::RippleRmsV => Some(f.ripple_rms_v),
            Figure::RippleHz => Some(f.ripple_hz),
            Figure::LoadA => Some(f.load_a),
            Figure::DiodePeakA => Some(f.diode_peak_a),
            Figure::DiodeAvgA => Some(f.diode_avg_a),
            Figure::DiodeRmsA => Some(f.diode_rms_a),
            Figure::DiodePivV => Some(f.diode_piv_v),
            Figure::WindingRmsA => Some(f.winding_rms_a),
            Figure::WindingPeakA => Some(f.winding_peak_a),
            Figure::WindingVa => Some(f.winding_va),
            Figure::CapRippleRmsA => Some(f.cap_ripple_rms_a),
            Figure::ConductionDeg => Some(f.conduction_deg),
            Figure::InrushPeakA => f.inrush_peak_a,
            Figure::CapPeakV => Some(f.cap_peak_v),
            Figure::SecondaryRmsV => Some(f.secondary_rms_v),
            Figure::ChokeRmsA => f.choke_rms_a,
            Figure::ChokePeakA => f.choke_peak_a,
            Figure::ChokeDcDropV => f.choke_dc_drop_v,
            Figure::OutCapRippleRmsA => f.out_cap_ripple_rms_a,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_table_agrees_with_the_figures_and_names_each_once() {
        let f = Figures::blend(&[]);
        let named = f.named();
        assert_eq!(named.len(), Figure::ALL.len());
        for (fig, (key, value)) in Figure::ALL.iter().zip(named) {
            assert_eq!(fig.key(), key);
            assert_eq!(fig.of(&f), value);
            assert_eq!(Figure::from_key(key), Some(*fig));
            assert!(fig.short().chars().count() <= 12, "{key}");
        }
        let mut keys: Vec<_> = Figure::ALL.iter().map(|f| f.key()).collect();
        keys.sort();
        keys.dedup();
        assert_eq!(keys.len(), Figure::ALL.len());
    }
}
