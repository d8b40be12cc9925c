//! Checking a parsed supply field by field against the range table, and the load's and the
//! visits' rules.

use super::*;

impl Supply {
    /// Checks every field against the range the model accepts ([`RANGES`]); the first fault
    /// found is returned, naming its key.
    pub fn validate(&self) -> Result<(), SupplyError> {
        if self.format == 0 {
            let allowed = if FORMAT == 1 {
                "1, the only format so far".to_string()
            } else {
                format!("between 1 and {FORMAT}")
            };
            return Err(SupplyError::out_of_range("format", "0", allowed));
        }
        if self.format > FORMAT {
            return Err(SupplyError::NewerFormat { found: self.format });
        }
        if self.name.trim().is_empty() {
            return Err(SupplyError::Missing {
                key: "name",
                why: "every supply needs a name to find it by",
                line: None,
            });
        }
        let m = &self.mains;
        MAINS_VRMS.check(m.vrms)?;
        MAINS_HZ.check(m.hz)?;
        MAINS_LOW_PCT.check(m.low_pct)?;
        MAINS_HIGH_PCT.check(m.high_pct)?;
        if let Some(c) = m.crest {
            MAINS_CREST.check(c)?;
        }
        if m.phases != 1 && m.phases != 3 {
            return Err(SupplyError::out_of_range(
                "mains.phases",
                m.phases.to_string(),
                "1 (single-phase) or 3 (three-phase, vrms line to line)",
            ));
        }
        let wanted = self.rectifier.topology.phases();
        if m.phases != wanted {
            return Err(SupplyError::out_of_range(
                "rectifier.topology",
                self.rectifier.topology.key(),
                if wanted == 3 {
                    "a single-phase topology (half-wave, center-tap, bridge, doubler, \
                     split-rail) on mains.phases = 1; a three-phase one needs mains.phases = 3"
                } else {
                    "three-phase-bridge or three-phase-star on mains.phases = 3"
                },
            ));
        }
        if self.transformer.is_absent() && self.rectifier.topology.has_half_windings() {
            return Err(SupplyError::out_of_range(
                "rectifier.topology",
                self.rectifier.topology.key(),
                "a topology without a center tap when there is no [transformer] (the line has \
                 no tap to return to)",
            ));
        }
        self.winding()?;
        if let Some(p) = self.transformer.ratio_pct {
            RATIO_PCT.check(p)?;
        }
        let r = &self.rectifier;
        self.rectifier_diode()?;
        for (range, v) in [
            (&TEMP_C, r.temp_c),
            (&DROP_SPREAD_PCT, r.drop_spread_pct),
            (&RATED_PIV_V, r.rated_piv_v),
            (&DIODE_RATED_A, r.rated_a),
            (&SURGE_A, r.surge_a),
            (&MAX_FIRST_UF, r.max_first_uf),
            (&MIN_PLATE_OHMS, r.min_plate_ohms),
            (&RATED_PEAK_A, r.rated_peak_a),
            (&RATED_DC_A, r.rated_dc_a),
        ] {
            if let Some(v) = v {
                range.check(v)?;
            }
        }
        let f = &self.filter;
        match f.kind {
            FilterKind::None => {
                if r.topology.needs_capacitor() {
                    return Err(SupplyError::out_of_range(
                        "filter.kind",
                        "none",
                        "capacitor or crc for a doubler (its capacitors are part of it)",
                    ));
                }
            }
            FilterKind::Capacitor | FilterKind::Crc | FilterKind::Lc | FilterKind::Clc => {
                let uf = f.uf.ok_or(SupplyError::Missing {
                    key: "filter.uf",
                    why: "a capacitor filter needs its capacitance in microfarads",
                    line: None,
                })?;
                FILTER_UF.check(uf)?;
                ESR_OHMS.check(f.esr_ohms)?;
                CAP_LOW_PCT.check(f.low_pct)?;
                CAP_HIGH_PCT.check(f.high_pct)?;
            }
        }
        if f.kind.has_second_stage() {
            let uf = f.second_uf.ok_or(SupplyError::Missing {
                key: "filter.second_uf",
                why: "a CRC or CLC filter needs its second capacitor in microfarads",
                line: None,
            })?;
            SECOND_UF.check(uf)?;
        }
        if f.kind == FilterKind::Crc {
            let ohms = f.series_ohms.ok_or(SupplyError::Missing {
                key: "filter.series_ohms",
                why: "a CRC filter needs the resistor between its capacitors",
                line: None,
            })?;
            SERIES_OHMS.check(ohms)?;
        }
        if f.kind.is_choke_input() && r.topology.needs_capacitor() {
            return Err(SupplyError::out_of_range(
                "filter.kind",
                f.kind.key(),
                "capacitor, crc or clc for a doubler (its capacitors are part of it)",
            ));
        }
        // A half-wave rectifier into a choke keeps its diode on through the negative half
        // cycle while the choke drives its current on, so the rail collapses towards zero
        // (such supplies add a freewheeling diode, which railcheck does not model).
        if f.kind.is_choke_input() && !r.topology.is_full_wave() {
            return Err(SupplyError::out_of_range(
                "filter.kind",
                f.kind.key(),
                "capacitor, crc or clc for a half-wave rectifier (a choke input needs a \
                 full-wave rectifier: on half wave the choke holds the diode on through the \
                 negative half cycle and the rail collapses)",
            ));
        }
        if f.kind.has_choke() {
            let h = f.choke_h.ok_or(SupplyError::Missing {
                key: "filter.choke_h",
                why: "a choke filter needs the choke's inductance in henries",
                line: None,
            })?;
            CHOKE_H.check(h)?;
            let ohms = f.choke_ohms.ok_or(SupplyError::Missing {
                key: "filter.choke_ohms",
                why: "a choke filter needs the choke's resistance (an ohmmeter across it, \
                      the supply off and discharged)",
                line: None,
            })?;
            CHOKE_OHMS.check(ohms)?;
            match (f.choke_light_h, f.choke_rated_a) {
                (None, None) => {}
                (Some(light), Some(rated)) => {
                    CHOKE_LIGHT_H.check(light)?;
                    CHOKE_RATED_A.check(rated)?;
                    if light < h {
                        return Err(SupplyError::out_of_range(
                            "filter.choke_light_h",
                            format_number(light),
                            format!(
                                "at least filter.choke_h = {} H: a swinging choke has more \
                                 inductance at light current, not less",
                                format_number(h)
                            ),
                        ));
                    }
                }
                (Some(_), None) => {
                    return Err(SupplyError::Missing {
                        key: "filter.choke_rated_a",
                        why: "a swinging choke needs the current at which it has choke_h",
                        line: None,
                    });
                }
                // A fixed choke's current rating, for the check.
                (None, Some(rated)) => CHOKE_RATED_A.check(rated)?,
            }
        }
        for (range, v) in [
            (&CAP_RATED_V, f.rated_v),
            (&RATED_RIPPLE_A, f.rated_ripple_a),
            (&BLEEDER_OHMS, f.bleeder_ohms),
            (&AGED_PCT, f.aged_pct),
            (&RATED_LIFE_H, f.rated_life_h),
            (&RATED_LIFE_C, f.rated_life_c),
            (&RATED_RIPPLE_HZ, f.rated_ripple_hz),
            (&RISE_C, f.rise_c),
            (&AMBIENT_C, f.ambient_c),
            (&DUTY_H_PER_DAY, f.duty_h_per_day),
            (&TAN_DELTA, f.tan_delta),
            (&TAN_DELTA_HZ, f.tan_delta_hz),
        ] {
            if let Some(v) = v {
                range.check(v)?;
            }
        }
        // A life needs both halves of its rating; an ESR is given one way.
        if f.rated_life_h.is_some() != f.rated_life_c.is_some() {
            return Err(SupplyError::out_of_range(
                if f.rated_life_h.is_some() {
                    "filter.rated_life_c"
                } else {
                    "filter.rated_life_h"
                },
                "missing",
                "given with its other half: a life is hours at a temperature (rated_life_h \
                 and rated_life_c, e.g. 2000 h at 105 degC)",
            ));
        }
        if f.tan_delta.is_some() && f.esr_ohms > 0.0 {
            return Err(SupplyError::out_of_range(
                "filter.tan_delta",
                format!(
                    "{} with esr_ohms = {}",
                    f.tan_delta.unwrap_or(0.0),
                    f.esr_ohms
                ),
                "one or the other: the ESR is esr_ohms, or tan delta / (2 pi f C) from the \
                 data sheet's tan_delta",
            ));
        }
        self.validate_load()?;
        if let Some(c) = &self.calibration {
            if c.visit.date.is_none() {
                return Err(SupplyError::out_of_range(
                    "calibration.visit",
                    c.visit.to_string(),
                    "a calendar date such as 2026-11-30",
                ));
            }
            for (range, v) in [
                (&CALIBRATION_WINDING, c.winding_factor),
                (&CALIBRATION_CREST, c.crest),
                (&CALIBRATION_CAP, c.cap_factor),
            ] {
                if let Some(v) = v {
                    range.check(v)?;
                }
            }
        }
        for (i, v) in self.visits.iter().enumerate() {
            let in_visit = |e: SupplyError| match e {
                SupplyError::OutOfRange {
                    key,
                    value,
                    allowed,
                    line,
                    ..
                } => SupplyError::OutOfRange {
                    key,
                    value,
                    allowed,
                    line,
                    visit: Some(i + 1),
                },
                other @ (SupplyError::Syntax { .. }
                | SupplyError::Missing { .. }
                | SupplyError::NewerFormat { .. }) => other,
            };
            if v.date.date.is_none() {
                return Err(in_visit(SupplyError::out_of_range(
                    "visit.date",
                    v.date.to_string(),
                    "a calendar date such as 2026-11-30",
                )));
            }
            let r = &v.readings;
            for (range, value) in [
                (&VISIT_MAINS_VRMS, r.mains_vrms),
                (&VISIT_SECONDARY_VAC, r.secondary_vac),
                (&VISIT_DC_V, r.dc_v),
                (&VISIT_RIPPLE_PP_V, r.ripple_pp_v),
                (&VISIT_RIPPLE_RMS_V, r.ripple_rms_v),
                (&VISIT_RIPPLE_HZ, r.ripple_hz),
                (&VISIT_LOAD_A, r.load_a),
            ] {
                if let Some(value) = value {
                    range.check(value).map_err(in_visit)?;
                }
            }
            for value in r.line_vrms.into_iter().flatten() {
                VISIT_LINE_VRMS.check(value).map_err(in_visit)?;
            }
        }
        if let Some(reg) = &self.regulator {
            OUTPUT_V.check(reg.output_v)?;
            DROPOUT_V.check(reg.dropout_v)?;
            if let Some(w) = reg.rated_w {
                REGULATOR_RATED_W.check(w)?;
            }
        }
        Ok(())
    }

    /// The load: one kind (current or resistance), its range of the same kind, low end not
    /// above the high end.
    fn validate_load(&self) -> Result<(), SupplyError> {
        let l = &self.load;
        if let Some(w) = l.watts {
            LOAD_WATTS.check(w)?;
            if l.amps.is_some() || l.ohms.is_some() {
                return Err(SupplyError::out_of_range(
                    "load.watts",
                    format_number(w),
                    "left out with `amps` or `ohms`: give one kind of load",
                ));
            }
            if self.regulator.is_some() {
                return Err(SupplyError::out_of_range(
                    "load.watts",
                    format_number(w),
                    "left out with a [regulator] (a regulator's load is its current or \
                     resistance; a converter behind the capacitor is the constant-power load)",
                ));
            }
            if let Some(v) = l.cutoff_v {
                CUTOFF_V.check(v)?;
            }
            for (range, v) in [
                (&MIN_AMPS, l.min_amps),
                (&MAX_AMPS, l.max_amps),
                (&MIN_OHMS, l.min_ohms),
                (&MAX_OHMS, l.max_ohms),
            ] {
                if let Some(v) = v {
                    return Err(SupplyError::out_of_range(
                        range.key,
                        format_number(v),
                        "left out with `watts` (a constant-power load): its spread is the \
                         worst case's own",
                    ));
                }
            }
            return Ok(());
        }
        if let Some(v) = l.cutoff_v {
            return Err(SupplyError::out_of_range(
                "load.cutoff_v",
                format_number(v),
                "only with `watts` (a constant-power load's undervoltage stop)",
            ));
        }
        let (range_kind, other_kind) = match (l.amps, l.ohms) {
            (Some(a), None) => {
                LOAD_AMPS.check(a)?;
                (
                    [(&MIN_AMPS, l.min_amps), (&MAX_AMPS, l.max_amps)],
                    [(&MIN_OHMS, l.min_ohms), (&MAX_OHMS, l.max_ohms)],
                )
            }
            (None, Some(o)) => {
                LOAD_OHMS.check(o)?;
                (
                    [(&MIN_OHMS, l.min_ohms), (&MAX_OHMS, l.max_ohms)],
                    [(&MIN_AMPS, l.min_amps), (&MAX_AMPS, l.max_amps)],
                )
            }
            (Some(_), Some(_)) => {
                return Err(SupplyError::out_of_range(
                    "load",
                    "both amps and ohms",
                    "either `amps` (constant current) or `ohms` (resistive), not both",
                ));
            }
            (None, None) => {
                return Err(SupplyError::Missing {
                    key: "load.amps",
                    why: "give the load as `amps` (constant current), `ohms` (resistive) or \
                          `watts` (constant power)",
                    line: None,
                });
            }
        };
        // A range of the other kind would be silently ignored by the worst case.
        for (range, v) in other_kind {
            if let Some(v) = v {
                let (nominal, its_range) = if l.amps.is_some() {
                    ("`amps` (a current load)", "`min_amps` / `max_amps`")
                } else {
                    ("`ohms` (a resistive load)", "`min_ohms` / `max_ohms`")
                };
                return Err(SupplyError::out_of_range(
                    range.key,
                    format_number(v),
                    format!("left out with {nominal}: its range is {its_range}"),
                ));
            }
        }
        for (range, v) in range_kind {
            if let Some(v) = v {
                range.check(v)?;
            }
        }
        if let [(min_range, Some(min)), (max_range, Some(max))] = range_kind
            && min > max
        {
            return Err(SupplyError::out_of_range(
                min_range.key,
                format_number(min),
                format!(
                    "at most `{}` ({}), being the low end of the range",
                    max_range.key,
                    format_number(max)
                ),
            ));
        }
        Ok(())
    }
}
