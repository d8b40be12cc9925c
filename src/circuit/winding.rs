//! The transformer as the circuit takes it: a turns ratio and resistances, from the file's
//! measured values, its nameplate, or a transformer assumed sized for the load.

use crate::supply::*;
use crate::units::format_number;

/// The turns ratio and series resistance the circuit uses, after the nameplate form is
/// turned into the measured form.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct WindingModel {
    /// Primary to whole secondary.
    pub ratio: f64,
    /// Whole secondary DC resistance, ohms.
    pub secondary_ohms: f64,
    /// Primary DC resistance, ohms (reflected by the circuit according to the topology).
    pub primary_ohms: f64,
    /// Regulation assumed from the rating when the nameplate gave none, percent.
    pub assumed_regulation_pct: Option<f64>,
    /// Where the resistance comes from, and the range the worst case and the diagnosis allow
    /// it.
    pub source: WindingSource,
    /// Leakage inductance referred to the whole secondary, henries (0 when the file gives
    /// none of `leakage_mh`, `impedance_pct`, `short_test`).
    pub leakage_h: f64,
}

/// Where a winding's resistance comes from.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum WindingSource {
    /// Measured (cold, with an ohmmeter) and written in the file.
    Measured,
    /// Worked out from the nameplate's regulation and VA rating.
    Nameplate,
    /// No transformer: the rectifier runs straight off the line, whose resistance is the
    /// file's `[line] ohms`, or, left out, a range from the wiring rules' usual drops (see
    /// [`Supply::off_line_winding`]), the low and high ends in ohms per phase.
    Line { assumed: Option<(f64, f64)> },
    /// Not stated: sized for the load (see [`Supply::assumed_winding`]).
    Assumed {
        /// The rating the transformer is taken to have, volt-amperes.
        rated_va: f64,
        /// The resistance range allowed, whole secondary, ohms.
        low_ohms: f64,
        high_ohms: f64,
    },
}

/// Copper's resistance rises 0.39 %/degC (memory of the handbook value); a winding in service
/// runs 20-40 degC above the cold ohmmeter reading (practice): up to 15.6 % more.
pub const WARM_WINDING_FACTOR: f64 = 1.0 + 0.0039 * 40.0;

/// The regulation of small transformers, 5-25 % (practice), the range assumed for a winding
/// whose resistance the file leaves out.
pub const ASSUMED_REGULATION_PCT: (f64, f64) = (5.0, 25.0);

/// A transformer may be up to this many times larger than its load needs (a bench or
/// general-purpose unit on a light load), which the low end of an assumed winding allows.
pub const ASSUMED_OVERSIZE: f64 = 4.0;

/// Field practice for small transformers with no regulation figure on the plate: the smaller
/// the unit, the softer it is (domain notes: 10-25 % for small units).
fn regulation_from_rating(rated_va: f64) -> f64 {
    match rated_va {
        va if va < 10.0 => 25.0,
        va if va < 50.0 => 15.0,
        va if va < 300.0 => 10.0,
        _ => 6.0,
    }
}

impl Supply {
    /// The rail's peak with ideal diodes and windings at nominal mains, volts: the whole
    /// secondary's peak times the topology's share (a doubler's twice it).
    pub fn ideal_peak_v(&self) -> f64 {
        let ratio = if self.transformer.is_absent() {
            1.0
        } else {
            self.resistive_winding().map_or(1.0, |w| w.ratio)
        };
        self.ideal_peak_v_at(ratio)
    }

    /// Turns the transformer section into a turns ratio and resistances (volts, ohms).
    ///
    /// Nameplate form: no-load secondary = `secondary_vrms * (1 + regulation_pct/100)`; without
    /// measured ohms the whole series resistance follows from the regulation at rated current,
    /// R = secondary_vrms^2 * regulation / rated_va, all put in the secondary.
    ///
    /// The leakage comes from `leakage_mh`, or the reactive part of the nameplate's
    /// `impedance_pct` (Z = pct x V^2 / VA on the secondary, X = sqrt(Z^2 - R^2)), or a
    /// `short_test` (X = sqrt((V/I)^2 - (W/I^2)^2) on the primary, over the ratio squared to
    /// the secondary; the test's R = W/I^2 is then the winding resistance unless ohms are
    /// measured).
    pub fn winding(&self) -> Result<WindingModel, SupplyError> {
        let mut model = if self.transformer.is_absent() {
            self.off_line_winding()
        } else {
            self.transformer_winding()?
        };
        // The line, or a line reactor, is on the primary side: its resistance adds to the
        // primary's and its inductance, over the ratio squared, to the leakage.
        if let Some(line) = &self.line {
            if let Some(ohms) = line.ohms {
                LINE_OHMS.check(ohms)?;
                if !self.transformer.is_absent() {
                    model.primary_ohms += ohms;
                }
            }
            let henries = self.henries_of(line)?;
            model.leakage_h += henries / (model.ratio * model.ratio);
        }
        Ok(model)
    }

    /// The line's inductance as stated (0 without one, or for a file that fails its checks),
    /// henries.
    pub fn line_henries(&self) -> f64 {
        self.line
            .as_ref()
            .and_then(|l| self.henries_of(l).ok())
            .unwrap_or(0.0)
    }

    /// The line's (or its reactor's) inductance, henries: `mh`, or `reactor_pct` of the
    /// phase voltage over `reactor_rated_a` as a reactance at the mains frequency.
    fn henries_of(&self, line: &Line) -> Result<f64, SupplyError> {
        match (line.mh, line.reactor_pct, line.reactor_rated_a) {
            (Some(_), Some(_), _) => Err(SupplyError::out_of_range(
                "line.mh",
                "given with reactor_pct",
                "one of mh and reactor_pct (with reactor_rated_a): each gives the inductance",
            )),
            (Some(mh), None, _) => {
                LINE_MH.check(mh)?;
                Ok(mh * 1e-3)
            }
            (None, Some(pct), Some(amps)) => {
                REACTOR_PCT.check(pct)?;
                REACTOR_RATED_A.check(amps)?;
                let phase_v = self.mains.vrms / (self.mains.phases as f64).sqrt();
                let omega = std::f64::consts::TAU * self.mains.hz;
                Ok(pct / 100.0 * phase_v / amps / omega)
            }
            (None, Some(_), None) => Err(SupplyError::Missing {
                key: "line.reactor_rated_a",
                why: "a reactor's percent impedance is stated at its rated current",
                line: None,
            }),
            (None, None, _) => Ok(0.0),
        }
    }

    /// A rectifier straight off the line: ratio 1, the line's resistance per phase (the
    /// whole loop on one phase) in place of the winding's. Left out, it is taken from the
    /// load: a drop of 0.5-5 % of the phase voltage at the load's DC current (wiring is sized
    /// for a few percent of drop; memory of the usual 3-5 % limits of wiring rules), its
    /// middle on a log scale the nominal.
    pub fn off_line_winding(&self) -> WindingModel {
        let stated = self.line.as_ref().and_then(|l| l.ohms);
        let (ohms, assumed) = match stated {
            Some(ohms) => (ohms, None),
            None => {
                let phase_v = self.mains.vrms / (self.mains.phases as f64).sqrt();
                let amps = self.rough_load_amps(self.ideal_peak_v_at(1.0)).max(1e-6);
                let low = 0.005 * phase_v / amps;
                let high = 0.05 * phase_v / amps;
                ((low * high).sqrt(), Some((low, high)))
            }
        };
        WindingModel {
            ratio: 1.0,
            secondary_ohms: ohms,
            primary_ohms: 0.0,
            assumed_regulation_pct: None,
            source: WindingSource::Line { assumed },
            leakage_h: 0.0,
        }
    }

    /// The rail's ideal peak at a turns ratio, volts (see [`Supply::ideal_peak_v`]).
    fn ideal_peak_v_at(&self, ratio: f64) -> f64 {
        self.mains.vrms / ratio * self.mains.crest() * self.rectifier.topology.peak_share()
    }

    /// The load's DC current at a rough rail, amps: its current, a regulator's output over
    /// the load resistance, the rail over it, or its watts over the rail.
    fn rough_load_amps(&self, rail_v: f64) -> f64 {
        let l = &self.load;
        match (&self.regulator, l.amps, l.ohms, l.watts) {
            (_, Some(a), _, _) => a,
            (Some(reg), None, Some(r), _) => reg.output_v / r,
            (None, None, Some(r), _) => rail_v / r,
            (_, None, None, Some(w)) => w / rail_v.max(1e-3),
            _ => 0.0,
        }
    }

    /// The transformer's turns ratio, resistances and leakage (see [`Supply::winding`]).
    fn transformer_winding(&self) -> Result<WindingModel, SupplyError> {
        let mut model = self.resistive_winding()?;
        let t = &self.transformer;
        let given = [
            t.leakage_mh.is_some(),
            t.impedance_pct.is_some(),
            t.short_test.is_some(),
        ];
        if given.iter().filter(|g| **g).count() > 1 {
            return Err(SupplyError::out_of_range(
                "transformer.leakage_mh",
                "given with impedance_pct or short_test",
                "one of leakage_mh, impedance_pct and short_test: each gives the leakage",
            ));
        }
        let omega = std::f64::consts::TAU * self.mains.hz;
        let ratio = model.ratio;
        let referred_ohms = model.secondary_ohms + model.primary_ohms / (ratio * ratio);
        if let Some(mh) = t.leakage_mh {
            LEAKAGE_MH.check(mh)?;
            model.leakage_h = mh * 1e-3;
        } else if let Some(pct) = t.impedance_pct {
            IMPEDANCE_PCT.check(pct)?;
            let va = t.rated_va.ok_or(SupplyError::Missing {
                key: "transformer.rated_va",
                why: "a percent impedance is a share of the rated VA's impedance",
                line: None,
            })?;
            RATED_VA.check(va)?;
            let volts = t.secondary_vrms.unwrap_or(self.mains.vrms / ratio);
            let z = pct / 100.0 * volts * volts / va;
            if z < referred_ohms {
                return Err(SupplyError::out_of_range(
                    "transformer.impedance_pct",
                    format_number(pct),
                    format!(
                        "at least the windings' own resistance, {:.2} % of the rating's \
                         impedance (the impedance includes the resistance)",
                        100.0 * referred_ohms / (volts * volts / va)
                    ),
                ));
            }
            model.leakage_h = (z * z - referred_ohms * referred_ohms).sqrt() / omega;
        } else if let Some(test) = t.short_test {
            SHORT_TEST_VOLTS.check(test.volts)?;
            SHORT_TEST_AMPS.check(test.amps)?;
            SHORT_TEST_WATTS.check(test.watts)?;
            let z = test.volts / test.amps;
            let r = test.watts / (test.amps * test.amps);
            if r > z {
                return Err(SupplyError::out_of_range(
                    "transformer.short_test.watts",
                    format_number(test.watts),
                    format!(
                        "at most volts x amps = {} W (the real power cannot exceed the \
                         apparent)",
                        format_number(test.volts * test.amps)
                    ),
                ));
            }
            model.leakage_h = (z * z - r * r).sqrt() / (ratio * ratio) / omega;
            if !matches!(model.source, WindingSource::Measured) {
                model.secondary_ohms = r / (ratio * ratio);
                model.primary_ohms = 0.0;
                model.source = WindingSource::Measured;
            }
        }
        Ok(model)
    }

    /// The turns ratio and the resistances, before the leakage.
    fn resistive_winding(&self) -> Result<WindingModel, SupplyError> {
        let t = &self.transformer;
        let secondary_ohms = t.secondary_ohms.unwrap_or(0.0);
        let primary_ohms = t.primary_ohms.unwrap_or(0.0);
        SECONDARY_OHMS.check(secondary_ohms)?;
        PRIMARY_OHMS.check(primary_ohms)?;
        if let Some(ratio) = t.ratio {
            RATIO.check(ratio)?;
            let measured = t.secondary_ohms.is_some() || t.primary_ohms.is_some();
            return Ok(if measured {
                WindingModel {
                    ratio,
                    secondary_ohms,
                    primary_ohms,
                    assumed_regulation_pct: None,
                    source: WindingSource::Measured,
                    leakage_h: 0.0,
                }
            } else {
                self.assumed_winding(ratio, None)
            });
        }
        let missing = |key| SupplyError::Missing {
            key,
            why: "give either `ratio` or the nameplate `primary_vrms` and `secondary_vrms`",
            line: None,
        };
        let primary = t.primary_vrms.ok_or(missing("transformer.ratio"))?;
        let secondary = t
            .secondary_vrms
            .ok_or(missing("transformer.secondary_vrms"))?;
        PRIMARY_VRMS.check(primary)?;
        SECONDARY_VRMS.check(secondary)?;
        if let Some(va) = t.rated_va {
            RATED_VA.check(va)?;
        }
        let (regulation, assumed) = match (t.regulation_pct, t.rated_va) {
            (Some(r), _) => (r, None),
            (None, Some(va)) => {
                let r = regulation_from_rating(va);
                (r, Some(r))
            }
            (None, None) => {
                return Err(SupplyError::Missing {
                    key: "transformer.regulation_pct",
                    why: "the nameplate form needs the regulation or the rated VA to know the no-load voltage",
                    line: None,
                });
            }
        };
        REGULATION_PCT.check(regulation)?;
        let no_load = secondary * (1.0 + regulation / 100.0);
        let ratio = primary / no_load;
        if !RATIO.allows(ratio) {
            return Err(SupplyError::out_of_range(
                RATIO.key,
                format!(
                    "{}, from primary_vrms over the no-load secondary_vrms",
                    format_number(ratio)
                ),
                RATIO.allowed(),
            ));
        }
        let measured = t.secondary_ohms.is_some() || t.primary_ohms.is_some();
        Ok(match (measured, t.rated_va) {
            (true, _) => WindingModel {
                ratio,
                secondary_ohms,
                primary_ohms,
                assumed_regulation_pct: assumed,
                source: WindingSource::Measured,
                leakage_h: 0.0,
            },
            (false, Some(va)) => WindingModel {
                ratio,
                secondary_ohms: secondary * secondary * regulation / 100.0 / va,
                primary_ohms,
                assumed_regulation_pct: assumed,
                source: WindingSource::Nameplate,
                leakage_h: 0.0,
            },
            (false, None) => self.assumed_winding(ratio, Some(regulation)),
        })
    }

    /// The winding of a transformer whose resistance the file leaves out, taken as sized for
    /// its load: the DC power the load draws (its current, or the rail's paper estimate over
    /// its resistance) times the volt-amperes a capacitor-input filter needs per watt, at
    /// least 1 VA. Copper loss as regulation: R = regulation x V^2 / VA on the whole
    /// secondary. The range runs from 5 % regulation on a transformer four times larger to
    /// 25 % on one just large enough (practice); the nominal is the nameplate's regulation on
    /// a transformer that size when given, otherwise the range's middle on a log scale, ohms.
    pub fn assumed_winding(&self, ratio: f64, regulation_pct: Option<f64>) -> WindingModel {
        let secondary_v = self.mains.vrms / ratio;
        let topology = self.rectifier.topology;
        let (share, diodes) = (topology.peak_share(), topology.diodes_to_peak());
        // A rough rail: the peak less about 0.8 V a silicon diode (practice).
        let rail_v = (share * secondary_v * std::f64::consts::SQRT_2 - 0.8 * diodes).max(0.1);
        let amps = self.rough_load_amps(rail_v);
        let rated_va = (topology.va_per_dc_watt() * rail_v * amps).max(1.0);
        let ohms = |reg_pct: f64, va: f64| reg_pct / 100.0 * secondary_v * secondary_v / va;
        let low_ohms = ohms(ASSUMED_REGULATION_PCT.0, ASSUMED_OVERSIZE * rated_va);
        let high_ohms = ohms(ASSUMED_REGULATION_PCT.1, rated_va);
        // With no more to go on, the middle of the range on a log scale: neither the tight
        // large unit nor the soft small one.
        let nominal = match regulation_pct {
            Some(r) => ohms(r, rated_va).clamp(low_ohms, high_ohms),
            None => (low_ohms * high_ohms).sqrt(),
        };
        WindingModel {
            ratio,
            secondary_ohms: nominal,
            primary_ohms: 0.0,
            assumed_regulation_pct: regulation_pct,
            source: WindingSource::Assumed {
                rated_va,
                low_ohms,
                high_ohms,
            },
            leakage_h: 0.0,
        }
    }
}
