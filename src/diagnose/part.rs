//! The part a technician goes for. Several faults can name the same part (a filter capacitor
//! whose capacitance has fallen, whose ESR has risen, or which has opened), and the readings
//! often cannot tell those faults apart when they can still tell the part: a DC and a ripple
//! peak to peak put a capacitor that lost capacitance and one whose ESR rose within a misfit
//! of each other, both far from every other fault. The part's belief is then the sum of its
//! faults' beliefs, and saying so answers the technician's first question (what to open up)
//! while the ranking, and each fault's next check, keep the rest. Which part each fault
//! concerns is our own judgement of what a technician opens up for it, not a published table.

use super::{Diagnosis, Fault};
use serde::Serialize;

/// A part of the supply (or what feeds or loads it) that a fault concerns.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Part {
    /// The capacitor the rectifier charges (a CRC's first, a doubler's pair).
    FilterCapacitor,
    /// A diode, a rectifier valve's plate or half a winding feeding the rail.
    Rectifier,
    /// The rectifier valve itself, worn.
    RectifierValve,
    /// The transformer's secondary (shorted turns, a wrong tap).
    Transformer,
    /// The mains, outside the unit.
    Mains,
    /// A phase of a three-phase line (its fuse or the line itself).
    LinePhase,
    /// The line reactor ahead of the rectifier.
    LineReactor,
    /// The filter's choke.
    Choke,
    /// The load beyond the rail.
    Load,
    /// The fuse, or the short that blew it.
    Fuse,
}

impl Part {
    /// The part in a technician's words.
    pub fn words(self) -> &'static str {
        match self {
            Part::FilterCapacitor => "the filter capacitor",
            Part::Rectifier => "the rectifier (a diode or half winding)",
            Part::RectifierValve => "the rectifier valve",
            Part::Transformer => "the transformer's secondary",
            Part::Mains => "the mains, outside the unit",
            Part::LinePhase => "a line phase (its fuse or the line)",
            Part::LineReactor => "the line reactor",
            Part::Choke => "the choke",
            Part::Load => "the load beyond the rail",
            Part::Fuse => "the fuse, or a short that blew it",
        }
    }
}

impl Fault {
    /// The part this fault concerns; None for the healthy unit and for a regulator in dropout,
    /// a state that goes with whichever fault drags the rail down rather than a part.
    pub fn part(self) -> Option<Part> {
        match self {
            Fault::Healthy | Fault::RegulatorDropout => None,
            Fault::CapacitanceLow | Fault::EsrHigh | Fault::CapacitorOpen => {
                Some(Part::FilterCapacitor)
            }
            Fault::RectifierLegOpen => Some(Part::Rectifier),
            Fault::WeakValve => Some(Part::RectifierValve),
            Fault::SecondaryLow => Some(Part::Transformer),
            Fault::MainsLow | Fault::MainsHigh => Some(Part::Mains),
            Fault::PhaseLost => Some(Part::LinePhase),
            Fault::ReactorShorted => Some(Part::LineReactor),
            Fault::ChokeShorted | Fault::ChokeOpen => Some(Part::Choke),
            Fault::LoadHeavy | Fault::LoadLight => Some(Part::Load),
            Fault::NoOutput => Some(Part::Fuse),
        }
    }
}

/// The part more likely than not at fault, with the belief in it and the faults that make it
/// up, likeliest first (each with its own belief).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LikelyPart {
    pub part: Part,
    /// The sum of its faults' beliefs, 0.5 to 1.
    pub score: f64,
    pub faults: Vec<(Fault, f64)>,
}

/// A fault holding less than this share of belief is not listed under its part (it would
/// show as 0 % or 1 %), though its share still counts in the part's sum.
const LISTED: f64 = 0.01;

impl Diagnosis {
    /// The part of the likeliest fault, when its faults together hold more than half the
    /// belief. Only that part is a candidate, so the line never contradicts the ranking (a
    /// part with more ways to fail does not overtake the fault ranked first by summing its
    /// lesser ones). A unit ranked healthy first can still have one (healthy at 40 %, the
    /// capacitor's two faults at 32 % and 26 %): the verdict and the ranking stay as they
    /// are, and this says where the rest of the belief points.
    pub fn likely_part(&self) -> Option<LikelyPart> {
        let part = self.hypotheses.iter().find_map(|h| h.fault.part())?;
        let of_part = || {
            self.hypotheses
                .iter()
                .filter(move |g| g.fault.part() == Some(part))
        };
        let score: f64 = of_part().map(|g| g.score).sum();
        let faults = of_part()
            .filter(|g| g.score >= LISTED)
            .map(|g| (g.fault, g.score))
            .collect();
        (score > 0.5).then_some(LikelyPart {
            part,
            score,
            faults,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::diagnose::Hypothesis;

    fn diagnosis(scores: &[(Fault, f64)]) -> Diagnosis {
        Diagnosis {
            verdict: "suspect",
            expectations: Vec::new(),
            hypotheses: scores
                .iter()
                .map(|&(fault, score)| Hypothesis {
                    fault,
                    score,
                    estimate: None,
                    why: String::new(),
                    next_check: fault.next_check(),
                    misfit: 0.0,
                })
                .collect(),
        }
    }

    #[test]
    fn two_faults_of_one_part_add_up_and_a_split_belief_names_no_part() {
        // Two capacitor faults nearly tied, a heavy load behind them: the capacitor.
        let d = diagnosis(&[
            (Fault::EsrHigh, 0.46),
            (Fault::CapacitanceLow, 0.43),
            (Fault::LoadHeavy, 0.105),
            (Fault::Healthy, 0.005),
        ]);
        let p = d.likely_part().unwrap();
        assert_eq!(p.part, Part::FilterCapacitor);
        assert!((p.score - 0.89).abs() < 1e-12, "{p:?}");
        assert_eq!(
            p.faults,
            vec![(Fault::EsrHigh, 0.46), (Fault::CapacitanceLow, 0.43)]
        );
        // Healthy first, the capacitor's two faults together past half: the capacitor.
        let d = diagnosis(&[
            (Fault::Healthy, 0.40),
            (Fault::CapacitanceLow, 0.32),
            (Fault::EsrHigh, 0.26),
            (Fault::LoadHeavy, 0.02),
        ]);
        assert_eq!(d.likely_part().unwrap().part, Part::FilterCapacitor);
        // No part past half: none named, whatever leads.
        let d = diagnosis(&[
            (Fault::Healthy, 0.45),
            (Fault::MainsLow, 0.30),
            (Fault::LoadHeavy, 0.25),
        ]);
        assert_eq!(d.likely_part(), None);
        // The likeliest fault's part only: a heavy load first is not overtaken by the
        // capacitor's three faults summed.
        let d = diagnosis(&[
            (Fault::LoadHeavy, 0.45),
            (Fault::CapacitanceLow, 0.30),
            (Fault::EsrHigh, 0.22),
            (Fault::Healthy, 0.03),
        ]);
        assert_eq!(d.likely_part(), None);
        // A regulator's dropout is a state, not a part.
        let d = diagnosis(&[(Fault::RegulatorDropout, 0.9), (Fault::Healthy, 0.1)]);
        assert_eq!(d.likely_part(), None);
    }
}
