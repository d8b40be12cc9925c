//! Every topology and every filter, through the new-supply template, a solve, the worst case
//! and the report: a new topology or filter that is listed in its enum but forgotten in a
//! place that knows them fails here (issue 12). The lists are checked against the enums'
//! exhaustive `index` methods, so a variant left out of `ALL` fails too.

use railcheck::supply::{FilterKind, Topology};

#[test]
fn the_lists_hold_every_variant_in_order() {
    for (i, t) in Topology::ALL.iter().enumerate() {
        assert_eq!(t.index(), i, "{t:?}");
    }
    for (i, k) in FilterKind::ALL.iter().enumerate() {
        assert_eq!(k.index(), i, "{k:?}");
    }
    // Keys are the file's words, each once.
    let mut keys: Vec<&str> = Topology::ALL.iter().map(|t| t.key()).collect();
    keys.extend(FilterKind::ALL.iter().map(|k| k.key()));
    let n = keys.len();
    keys.sort();
    keys.dedup();
    assert_eq!(keys.len(), n);
}

#[test]
fn every_topology_and_filter_solves_and_reports_from_its_template() {
    for t in Topology::ALL {
        for k in FilterKind::ALL {
            let mut s = railcheck::tui::app::template(t);
            s.filter.kind = k;
            if k.has_second_stage() {
                s.filter.series_ohms = Some(10.0);
                s.filter.second_uf = Some(1000.0);
            }
            if k.has_choke() {
                let (henries, ohms) = railcheck::analysis::choke_guess(&s);
                s.filter.choke_h = Some(henries);
                s.filter.choke_ohms = Some(ohms);
            }
            if !k.has_capacitor() {
                // An unfiltered rectifier with a current load has no working point below its
                // knee to speak of: a resistance, as such a load is.
                s.load.amps = None;
                s.load.ohms = Some(100.0);
            }
            let refused = (t.needs_capacitor() && !k.has_capacitor())
                || (k.is_choke_input() && (t.needs_capacitor() || !t.is_full_wave()));
            if refused {
                // Refused with the reason, never solved as something else.
                let e = s.validate().unwrap_err().to_string();
                assert!(e.contains("filter.kind"), "{t:?} {k:?}: {e}");
                continue;
            }
            s.validate().unwrap_or_else(|e| panic!("{t:?} {k:?}: {e}"));
            let text = s.to_toml_string();
            let back = railcheck::Supply::from_toml_str(&text).unwrap();
            assert_eq!(back.rectifier.topology, t);
            assert_eq!(back.filter.kind, k);
            let r = railcheck::report::build_default(back, "template")
                .unwrap_or_else(|e| panic!("{t:?} {k:?}: {e}"));
            let json = r.json();
            let dc = json["nominal"]["dc_v"].as_f64().unwrap();
            let ripple_hz = json["nominal"]["ripple_hz"].as_f64().unwrap();
            // The rail is positive and below the winding's peak; the ripple comes as often
            // as the topology's pulses.
            // (The template's mains: 230 V, or 400 V line to line on three phases.)
            let mains = if t.phases() == 3 { 400.0 } else { 230.0 };
            let peak = mains / 10.0 * std::f64::consts::SQRT_2 * t.peak_share();
            assert!(
                dc > 0.0 && dc < peak,
                "{t:?} {k:?}: dc {dc} against peak {peak}"
            );
            assert_eq!(ripple_hz, 50.0 * t.pulses_per_cycle() as f64, "{t:?} {k:?}");
            assert!(r.text().contains(t.key()), "{t:?} {k:?}");
        }
    }
}
