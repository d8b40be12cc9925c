//! A visit's readings judged against their windows: the diagnosis of the file as it is now,
//! cut down to what a list of visits shows (each reading's window, the verdict and the
//! top-ranked fault). The screen's visits view and `railcheck log` both judge through here, so
//! the two cannot disagree about a visit.

use super::{Expectation, diagnose};
use crate::supply::Supply;
use crate::visit::Readings;

/// One visit's readings against their windows, as the diagnosis of the file as it is now
/// gives them.
#[derive(Debug, Clone, PartialEq)]
pub enum Judgement {
    /// Not worked out: older than the newest visits a caller asked for (see [`plan`]).
    NotJudged,
    /// The diagnosis refused the readings (none of the rail, or one the unit cannot show).
    Refused(String),
    Judged {
        /// Each reading with its window: "within", "above" or "below".
        expectations: Vec<Expectation>,
        /// The verdict and the top-ranked fault (its JSON key) with its score, for a visit
        /// that kept none.
        verdict: &'static str,
        fault: &'static str,
        score: f64,
        /// The top fault's fitted value, as the diagnosis gives it (`("uf", 1093.0)`).
        estimate: Option<(&'static str, f64)>,
    },
}

/// Judges one set of readings: never [`Judgement::NotJudged`].
pub fn judge(supply: &Supply, readings: &Readings) -> Judgement {
    match diagnose(supply, readings) {
        Ok(d) => {
            let (fault, score, estimate) = d
                .hypotheses
                .first()
                .map(|h| (h.fault.key(), h.score, h.estimate))
                .unwrap_or(("", 0.0, None));
            Judgement::Judged {
                verdict: d.verdict,
                fault,
                score,
                estimate,
                expectations: d.expectations,
            }
        }
        Err(e) => Judgement::Refused(e.to_string()),
    }
}

/// What judging a supply's visits takes: each distinct set of readings once (a diagnosis is
/// the dear part, and a unit read the same twice gives the same windows), newest first, and
/// for each visit which of them is its own.
#[derive(Debug, Clone, PartialEq)]
pub struct Plan {
    /// The distinct readings to judge, in the order of the newest visit holding each.
    pub readings: Vec<Readings>,
    /// For each visit, in the order of the supply's visits, the index of its readings in
    /// `readings`; None for a visit left out.
    pub of_visit: Vec<Option<usize>>,
}

/// The plan for the newest `limit` visits of `supply` (all of them with `usize::MAX`).
pub fn plan(supply: &Supply, limit: usize) -> Plan {
    let n = supply.visits.len();
    let mut order: Vec<usize> = (0..n).collect();
    // Newest first: when a limit cuts the list, the visits a technician looks at first are
    // the ones kept.
    order.sort_by_key(|&i| std::cmp::Reverse(supply.visits[i].date_text()));
    let mut readings: Vec<Readings> = Vec::new();
    let mut of_visit = vec![None; n];
    for &i in order.iter().take(limit) {
        let r = supply.visits[i].readings;
        let k = match readings.iter().position(|x| *x == r) {
            Some(k) => k,
            None => {
                readings.push(r);
                readings.len() - 1
            }
        };
        of_visit[i] = Some(k);
    }
    Plan { readings, of_visit }
}

impl Plan {
    /// Each visit's judgement from the judgements of [`Plan::readings`] (in their order).
    pub fn assemble(&self, judged: &[Judgement]) -> Vec<Judgement> {
        self.of_visit
            .iter()
            .map(|k| match k {
                Some(k) => judged[*k].clone(),
                None => Judgement::NotJudged,
            })
            .collect()
    }
}

/// Judges the newest `limit` visits of `supply` one after another (in the order of its
/// visits), asking `keep_going` between diagnoses; None when it says no. Visits with the same
/// readings share one diagnosis.
pub fn judge_visits(
    supply: &Supply,
    limit: usize,
    keep_going: &dyn Fn() -> bool,
) -> Option<Vec<Judgement>> {
    let plan = plan(supply, limit);
    let mut judged = Vec::with_capacity(plan.readings.len());
    for r in &plan.readings {
        if !keep_going() {
            return None;
        }
        judged.push(judge(supply, r));
    }
    Some(plan.assemble(&judged))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The trade's bench supply (center tap, 80 V 60 Hz, 4.85:1, 47 uF, 680 ohm), with three
    /// visits: two alike near what the engine gives for it (9.81 V, 1.88 V p-p), and one with
    /// the bench's 9.62 V DC and 2.8 V p-p (fact of the trade, common practice).
    fn bench() -> Supply {
        Supply::from_toml_str(
            "format = 1\nname = \"bench\"\n[mains]\nvrms = 80.0\nhz = 60.0\n\
             [transformer]\nratio = 4.85\n[rectifier]\ntopology = \"center-tap\"\n\
             diode = \"silicon\"\n[filter]\nkind = \"capacitor\"\nuf = 47.0\n[load]\n\
             ohms = 680.0\n\
             [[visit]]\ndate = 2026-01-10\nmains_vrms = 80.0\ndc_v = 9.8\nripple_pp_v = 1.9\n\
             [[visit]]\ndate = 2026-03-10\nmains_vrms = 80.0\ndc_v = 9.62\nripple_pp_v = 2.8\n\
             [[visit]]\ndate = 2026-02-10\nmains_vrms = 80.0\ndc_v = 9.8\nripple_pp_v = 1.9\n",
        )
        .unwrap()
    }

    #[test]
    fn a_judgement_is_the_diagnosis_cut_down() {
        let s = bench();
        for v in &s.visits {
            let d = diagnose(&s, &v.readings).unwrap();
            match judge(&s, &v.readings) {
                Judgement::Judged {
                    expectations,
                    verdict,
                    fault,
                    score,
                    estimate,
                } => {
                    assert_eq!(expectations, d.expectations);
                    assert_eq!(verdict, d.verdict);
                    assert_eq!(fault, d.hypotheses[0].fault.key());
                    assert_eq!(score, d.hypotheses[0].score);
                    assert_eq!(estimate, d.hypotheses[0].estimate);
                }
                other @ (Judgement::NotJudged | Judgement::Refused(_)) => panic!("{other:?}"),
            }
        }
        // Readings at the engine's own nominal, rounded, are healthy (self-consistency, not an
        // outside fact). The bench's 2.8 V p-p is more than the handbook's I / (2 f C) = 0.0141
        // A / (120 Hz x 47 uF) = 2.5 V, itself an overestimate (it takes the capacitor as
        // discharging all cycle; common practice): only a capacitor below its 47 uF gives it.
        let judged = judge_visits(&s, usize::MAX, &|| true).unwrap();
        assert!(
            matches!(
                judged[0],
                Judgement::Judged {
                    verdict: "healthy",
                    ..
                }
            ),
            "{:?}",
            judged[0]
        );
        assert!(
            matches!(
                judged[1],
                Judgement::Judged {
                    fault: "capacitance-low",
                    ..
                }
            ),
            "{:?}",
            judged[1]
        );
    }

    #[test]
    fn refused_readings_say_why() {
        let s = bench();
        // A DC reading above the winding's peak at the highest mains cannot be this unit's.
        let r = Readings {
            dc_v: Some(500.0),
            ..Readings::default()
        };
        match judge(&s, &r) {
            Judgement::Refused(why) => {
                assert!(
                    why.contains("500") && why.contains("outside what this unit can show"),
                    "{why}"
                )
            }
            other @ (Judgement::NotJudged | Judgement::Judged { .. }) => panic!("{other:?}"),
        }
    }

    #[test]
    fn the_plan_keeps_the_newest_and_shares_equal_readings() {
        let s = bench();
        let all = plan(&s, usize::MAX);
        // Visits 0 and 2 read alike: two diagnoses for three visits, the newest (03-10) first.
        assert_eq!(all.readings.len(), 2);
        assert_eq!(all.of_visit, vec![Some(1), Some(0), Some(1)]);
        // The newest two: 03-10 and 02-10; 01-10 is left out though it reads like 02-10.
        let two = plan(&s, 2);
        assert_eq!(two.of_visit, vec![None, Some(0), Some(1)]);
        let judged = two.assemble(&[Judgement::Refused("a".into()), Judgement::NotJudged]);
        assert_eq!(judged[0], Judgement::NotJudged);
        assert_eq!(judged[1], Judgement::Refused("a".into()));
        // Told to stop, nothing comes back.
        assert_eq!(judge_visits(&s, usize::MAX, &|| false), None);
    }
}
