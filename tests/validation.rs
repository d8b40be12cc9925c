//! The file validator's smaller promises (issue 9, point 10): physical floors on values, range
//! messages that are short, name the key, the value and the range and carry the line, a load
//! range that means what it says, one diode law per table.

use railcheck::supply::Supply;

const BRIDGE: &str = r#"format = 1
name = "Validation bridge"
[mains]
vrms = 230.0
hz = 50.0
[transformer]
ratio = 9.58
secondary_ohms = 1.8
[rectifier]
topology = "bridge"
diode = "silicon"
[filter]
kind = "capacitor"
uf = 2200.0
bleeder_ohms = 4700.0
[load]
amps = 0.35
min_amps = 0.05
max_amps = 0.4
"#;

/// The nameplate form of the same transformer.
const PLATE: &str = r#"format = 1
name = "Validation plate"
[mains]
vrms = 230.0
hz = 50.0
[transformer]
primary_vrms = 230.0
secondary_vrms = 24.0
rated_va = 20.0
[rectifier]
topology = "bridge"
[filter]
kind = "capacitor"
uf = 2200.0
[load]
ohms = 68.0
"#;

fn refused(text: &str) -> String {
    match Supply::from_toml_str(text) {
        Ok(_) => panic!("accepted:\n{text}"),
        Err(e) => e.to_string(),
    }
}

/// A message a person can read: no run of more than 20 digits (a 1e308 spelled out is 309).
fn short(message: &str) -> bool {
    let mut run = 0;
    for c in message.chars() {
        run = if c.is_ascii_digit() { run + 1 } else { 0 };
        if run > 20 {
            return false;
        }
    }
    message.len() < 300
}

#[test]
fn tiny_values_are_refused_at_a_physical_floor() {
    for (text, key, shown) in [
        (
            BRIDGE.replace("vrms = 230.0", "vrms = 5e-324"),
            "mains.vrms",
            "5e-324",
        ),
        (
            PLATE.replace("rated_va = 20.0", "rated_va = 1e-300"),
            "transformer.rated_va",
            "1e-300",
        ),
        (
            BRIDGE.replace("uf = 2200.0", "uf = 1e-300"),
            "filter.uf",
            "1e-300",
        ),
        (
            BRIDGE.replace("bleeder_ohms = 4700.0", "bleeder_ohms = 1e-300"),
            "filter.bleeder_ohms",
            "1e-300",
        ),
    ] {
        let e = refused(&text);
        assert!(e.contains(key) && e.contains(shown), "{e}");
        assert!(short(&e), "{e}");
    }
    // The smallest real parts stay accepted: a 0.35 VA board transformer, a 1 nF capacitor,
    // a 12 V AC feed (practice).
    for text in [
        PLATE.replace("rated_va = 20.0", "rated_va = 0.35"),
        BRIDGE.replace("uf = 2200.0", "uf = 0.001"),
        BRIDGE
            .replace("vrms = 230.0", "vrms = 12.0")
            .replace("ratio = 9.58", "ratio = 1.0"),
    ] {
        Supply::from_toml_str(&text).unwrap_or_else(|e| panic!("{e}\n{text}"));
    }
}

#[test]
fn a_huge_value_is_shown_in_e_notation() {
    let e = refused(&BRIDGE.replace("uf = 2200.0", "uf = 1e308"));
    assert!(short(&e), "1e308 spelled out: {e}");
    assert!(e.contains("got 1e308"), "{e}");
}

#[test]
fn a_range_error_states_both_ends() {
    // The ceiling is what was passed, so the range must say it, not only "above 0".
    let e = refused(&BRIDGE.replace("bleeder_ohms = 4700.0", "bleeder_ohms = 1e308"));
    assert!(
        e.contains("filter.bleeder_ohms") && e.contains("1e12"),
        "{e}"
    );
}

#[test]
fn format_zero_names_the_one_format() {
    let e = refused(&BRIDGE.replace("format = 1", "format = 0"));
    assert!(!e.contains("between 1 and 1"), "{e}");
    assert!(e.contains("`format`") && e.contains("got 0"), "{e}");
}

#[test]
fn range_errors_carry_the_line() {
    for (text, line) in [
        (BRIDGE.replace("hz = 50.0", "hz = 5.0"), "line 5,"),
        (BRIDGE.replace("uf = 2200.0", "uf = -47.0"), "line 14,"),
        (BRIDGE.replace("amps = 0.35", "amps = -1.0"), "line 17,"),
        (
            BRIDGE.replace("diode = \"silicon\"", "diode = { drop_v = 70.0 }"),
            "line 11,",
        ),
    ] {
        let e = refused(&text);
        assert!(e.contains(line), "{line} not in {e}");
    }
}

#[test]
fn visit_errors_name_the_visit() {
    let with_visit =
        |visit: &str| format!("{BRIDGE}\n[[visit]]\ndate = 2025-01-02\n\n[[visit]]\n{visit}\n");
    let e = refused(&with_visit("date = \"yesterday\"\ndc_v = 30.0"));
    assert!(e.contains("visit.date") && !e.contains("load.date"), "{e}");
    assert!(e.contains("line 25"), "{e}");
    let e = refused(&with_visit("date = 2025-02-03\ndc_v = 1e308"));
    assert!(e.contains("visit.dc_v") && e.contains("visit 2"), "{e}");
    assert!(e.contains("line 26") && short(&e), "{e}");
}

#[test]
fn a_load_range_must_be_in_order() {
    let e = refused(&BRIDGE.replace("min_amps = 0.05", "min_amps = 0.5"));
    assert!(e.contains("load.min_amps") && e.contains("max_amps"), "{e}");
    let e = refused(&PLATE.replace(
        "ohms = 68.0",
        "ohms = 68.0\nmin_ohms = 100.0\nmax_ohms = 50.0",
    ));
    assert!(e.contains("load.min_ohms"), "{e}");
    // A range in order and of the right kind is kept as written.
    let s = Supply::from_toml_str(&PLATE.replace("ohms = 68.0", "ohms = 68.0\nmin_ohms = 50.0"))
        .unwrap();
    assert_eq!(s.load.min_ohms, Some(50.0));
}

#[test]
fn a_load_range_must_be_of_the_load_s_kind() {
    let e = refused(&BRIDGE.replace("min_amps = 0.05", "min_ohms = 5.0"));
    assert!(e.contains("load.min_ohms") && e.contains("amps"), "{e}");
    let e = refused(&PLATE.replace("ohms = 68.0", "ohms = 68.0\nmax_amps = 2.0"));
    assert!(e.contains("load.max_amps"), "{e}");
}

#[test]
fn a_diode_table_gives_one_law() {
    let e = refused(&BRIDGE.replace(
        "diode = \"silicon\"",
        "diode = { drop_v = 0.7, ohms = 0.05, is_a = 1e-9, n = 2.0 }",
    ));
    assert!(
        e.contains("rectifier.diode") && e.contains("line 11"),
        "{e}"
    );
    // Each law alone still reads, the junction's rs_ohms and the drop's ohms defaulting to 0.
    for law in [
        "{ drop_v = 0.7 }",
        "{ is_a = 1e-9, n = 2 }",
        "{ is_a = 7e-9, n = 1.8, rs_ohms = 0.034 }",
    ] {
        let text = BRIDGE.replace("diode = \"silicon\"", &format!("diode = {law}"));
        Supply::from_toml_str(&text).unwrap_or_else(|e| panic!("{law}: {e}"));
    }
    let e = refused(&BRIDGE.replace("diode = \"silicon\"", "diode = { n = 2 }"));
    assert!(
        e.contains("is_a"),
        "a half-given law names what it lacks: {e}"
    );
}

/// The README's file format section states every key's range and the reason for its floor,
/// as the validator's table has them (one table, read by the code and the docs).
#[test]
fn readme_states_every_range_and_its_reason() {
    let readme =
        std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/README.md")).unwrap();
    let mut missing = Vec::new();
    for r in railcheck::supply::RANGES {
        let row = format!("| `{}` | {} | {} |", r.key, r.allowed(), r.why);
        if !readme.contains(&row) {
            missing.push(row);
        }
    }
    assert!(
        missing.is_empty(),
        "rows to put in README.md:\n{}",
        missing.join("\n")
    );
}

/// The README's example file is a valid supply file, visits and all.
#[test]
fn the_readme_example_file_loads() {
    let readme =
        std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/README.md")).unwrap();
    let start = readme.find("```toml\nformat = 1").expect("the example") + "```toml\n".len();
    let end = start + readme[start..].find("```").unwrap();
    let s = Supply::from_toml_str(&readme[start..end]).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(s.visits.len(), 1);
    assert_eq!(s.visits[0].replaced, vec!["C4 2200uF 50V".to_string()]);
}
