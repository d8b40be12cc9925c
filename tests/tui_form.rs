//! The screen's form, keys and library actions as a technician uses them (issue 11), driven
//! through the update function and drawn on ratatui's TestBackend.

mod common;
use common::screen::{demo, go_to, keys, screen, typed};
use railcheck::supply::Supply;
use railcheck::tui::app::{App, Confirm, Mode, Msg, Panel};
use railcheck::tui::fields::FIELDS;

fn select(app: &mut App, name: &str) {
    app.panel = Panel::List;
    let pos = app
        .visible()
        .iter()
        .position(|&i| app.entries[i].name() == name)
        .unwrap();
    for _ in 0..app.entries.len() {
        app.update(Msg::Up);
    }
    for _ in 0..pos {
        app.update(Msg::Down);
    }
    assert_eq!(app.open.as_ref().unwrap().supply.name, name);
}

fn on_disk(app: &App) -> (Supply, String) {
    let file = &app.open.as_ref().unwrap().entry.file;
    let text = std::fs::read_to_string(file).unwrap();
    (Supply::from_toml_str(&text).unwrap(), text)
}

const PUMP: &str = "Pump-house 2, relay rail";

#[test]
fn the_form_holds_the_nameplate_and_ratings_and_asks_before_dropping_the_ratio() {
    let (mut app, _) = demo("nameplate");
    select(&mut app, PUMP);
    // Every row of the table is a key the file knows.
    for f in FIELDS.iter() {
        assert!(
            railcheck::supply::RANGES.iter().any(|r| r.key == f.path)
                || ["name", "site", "notes"].contains(&f.path)
                || f.is_choice(),
            "{} is not a file key",
            f.path
        );
    }
    go_to(&mut app, "transformer.form");
    keys(&mut app, &[Msg::Right]);
    match &app.mode {
        Mode::Confirm(Confirm::Drop { drops, .. }) => {
            assert_eq!(drops, &vec!["transformer.ratio = 9.58".to_string()])
        }
        other => panic!("asked nothing: {other:?}"),
    }
    assert!(screen(&app, 100, 30).contains("transformer.ratio = 9.58"));
    // n keeps the ratio.
    keys(&mut app, &[Msg::Char('n')]);
    assert_eq!(
        app.open.as_ref().unwrap().supply.transformer.ratio,
        Some(9.58)
    );
    keys(&mut app, &[Msg::Right, Msg::Char('y')]);
    let s = &app.open.as_ref().unwrap().supply;
    assert_eq!(s.transformer.ratio, None);
    assert_eq!(s.transformer.primary_vrms, Some(230.0));
    // The nameplate's rows are on the form now, marked as guesses until set.
    go_to(&mut app, "transformer.secondary_vrms");
    typed(&mut app, "24");
    keys(&mut app, &[Msg::Enter]);
    go_to(&mut app, "transformer.rated_va");
    typed(&mut app, "36");
    keys(&mut app, &[Msg::Enter]);
    app.wait_idle();
    let (saved, _) = on_disk(&app);
    assert_eq!(
        (saved.transformer.secondary_vrms, saved.transformer.rated_va),
        (Some(24.0), Some(36.0))
    );
    assert!(
        !saved
            .unconfirmed
            .contains(&"transformer.secondary_vrms".to_string())
    );
    assert!(
        saved
            .unconfirmed
            .contains(&"transformer.regulation_pct".to_string())
    );
    // With the VA rated, the transformer's check is made, not "not rated".
    let solved = app.open.as_ref().unwrap().solved.as_ref().as_ref().unwrap();
    assert!(solved.checks.iter().any(|c| c.id == "transformer-va"));
    assert!(!solved.not_rated.contains(&"transformer-va"));
    let shown = screen(&app, 120, 40);
    assert!(
        shown.contains("Regulation %") && shown.contains("?guess"),
        "{shown}"
    );
}

#[test]
fn undo_brings_back_a_dropped_key_with_its_comment() {
    let (mut app, _) = demo("undo-comment");
    select(&mut app, PUMP);
    let (_, before) = on_disk(&app);
    assert!(before.contains("ratio = 9.58"));
    let comment = before
        .lines()
        .find(|l| l.starts_with("ratio"))
        .unwrap()
        .to_string();
    go_to(&mut app, "transformer.form");
    keys(&mut app, &[Msg::Right, Msg::Char('y')]);
    let (_, switched) = on_disk(&app);
    assert!(!switched.contains("ratio = 9.58"));
    keys(&mut app, &[Msg::Char('u')]);
    let (s, back) = on_disk(&app);
    assert_eq!(s.transformer.ratio, Some(9.58));
    assert!(back.contains(&comment), "{comment:?} lost:\n{back}");
    assert_eq!(back, before, "the file is as it was");
}

#[test]
fn the_field_editor_moves_deletes_and_clears_like_a_line_editor() {
    let (mut app, _) = demo("editor");
    select(&mut app, PUMP);
    go_to(&mut app, "filter.uf");
    // Enter selects the old value: Home keeps it for editing, Delete takes its first digit.
    keys(&mut app, &[Msg::Enter, Msg::Home, Msg::Delete]);
    typed(&mut app, "4");
    keys(&mut app, &[Msg::End, Msg::Backspace, Msg::Backspace]);
    typed(&mut app, "70");
    match &app.mode {
        Mode::Editing { editor } => assert_eq!(editor.text, "4270"),
        other => panic!("{other:?}"),
    }
    // Ctrl-U clears, and the typed value goes in.
    keys(&mut app, &[Msg::Ctrl('u')]);
    typed(&mut app, "3m3");
    keys(&mut app, &[Msg::Enter]);
    assert_eq!(app.open.as_ref().unwrap().supply.filter.uf, Some(3300.0));
    // Enter moved on to the next row, and a digit there starts typing at once.
    assert_eq!(
        FIELDS[app.open.as_ref().unwrap().field].path,
        "filter.esr_ohms"
    );
    typed(&mut app, "0.1");
    keys(&mut app, &[Msg::Enter]);
    assert_eq!(app.open.as_ref().unwrap().supply.filter.esr_ohms, 0.1);
    // Ctrl-W deletes a word of the name.
    go_to(&mut app, "name");
    keys(
        &mut app,
        &[Msg::Enter, Msg::End, Msg::Ctrl('w'), Msg::Ctrl('w')],
    );
    typed(&mut app, "rail B");
    keys(&mut app, &[Msg::Enter]);
    assert_eq!(
        app.open.as_ref().unwrap().supply.name,
        "Pump-house 2, rail B"
    );
}

#[test]
fn enter_on_a_choice_opens_a_list() {
    let (mut app, _) = demo("picker");
    select(&mut app, PUMP);
    go_to(&mut app, "rectifier.topology");
    keys(&mut app, &[Msg::Enter]);
    assert!(matches!(app.mode, Mode::Picker { .. }));
    let shown = screen(&app, 100, 30);
    assert!(
        shown.contains("half-wave") && shown.contains("split-rail"),
        "{shown}"
    );
    // bridge -> doubler, taken.
    keys(&mut app, &[Msg::Down, Msg::Enter]);
    assert_eq!(
        app.open.as_ref().unwrap().supply.rectifier.topology.key(),
        "doubler"
    );
    // Esc leaves it as it was.
    keys(&mut app, &[Msg::Enter, Msg::Down, Msg::Escape]);
    assert_eq!(
        app.open.as_ref().unwrap().supply.rectifier.topology.key(),
        "doubler"
    );
}

#[test]
fn a_new_supply_marks_its_template_values_as_guesses_until_set() {
    let (mut app, _) = demo("guesses");
    keys(&mut app, &[Msg::Char('n'), Msg::Enter]);
    let s = &app.open.as_ref().unwrap().supply;
    assert!(s.unconfirmed.contains(&"filter.esr_ohms".to_string()));
    assert!(screen(&app, 120, 40).contains("?guess"));
    go_to(&mut app, "filter.esr_ohms");
    typed(&mut app, "0.03");
    keys(&mut app, &[Msg::Enter]);
    let (saved, _) = on_disk(&app);
    assert!(!saved.unconfirmed.contains(&"filter.esr_ohms".to_string()));
    assert!(
        saved
            .unconfirmed
            .contains(&"transformer.secondary_ohms".to_string())
    );
    // The template's ratio goes with the switch to a nameplate, and its guess mark with it.
    go_to(&mut app, "transformer.form");
    keys(&mut app, &[Msg::Right, Msg::Char('y')]);
    let (saved, _) = on_disk(&app);
    assert!(!saved.unconfirmed.contains(&"transformer.ratio".to_string()));
    assert!(
        saved
            .unconfirmed
            .contains(&"transformer.secondary_vrms".to_string())
    );
}

/// Issue 11's count: a 120 V 60 Hz bench supply with a 24 V 36 VA nameplate transformer, a
/// bridge, 4700 uF 35 V and a 1.5 A load, entered from a new supply (at most 60 keys).
#[test]
fn entering_a_bench_supply_takes_at_most_sixty_keys() {
    let (mut app, _) = demo("count");
    let mut n = 0;
    let mut press = |app: &mut App, msgs: &[Msg]| {
        n += msgs.len();
        keys(app, msgs);
    };
    let chars = |t: &str| t.chars().map(Msg::Char).collect::<Vec<_>>();
    press(&mut app, &[Msg::Char('n'), Msg::Enter]); // new, bridge
    press(&mut app, &[Msg::Down, Msg::Down, Msg::Down]); // to the mains volts
    press(&mut app, &chars("120"));
    press(&mut app, &[Msg::Enter]);
    press(&mut app, &chars("60"));
    press(&mut app, &[Msg::Enter]);
    press(
        &mut app,
        &[Msg::Down, Msg::Down, Msg::Down, Msg::Right, Msg::Char('y')],
    ); // nameplate
    press(&mut app, &[Msg::Down, Msg::Down]); // primary (120, from the mains), secondary
    press(&mut app, &chars("24"));
    press(&mut app, &[Msg::Enter, Msg::Down]); // past the regulation, to the VA
    press(&mut app, &chars("36"));
    press(&mut app, &[Msg::Enter]);
    press(&mut app, &[Msg::Enter, Msg::Backspace, Msg::Enter]); // template winding out
    // To the capacitor, past the leakage rows and the rectifier's ratings.
    press(
        &mut app,
        &[Msg::PageDown, Msg::Down, Msg::Down, Msg::Down, Msg::Down],
    );
    press(&mut app, &chars("4700"));
    press(&mut app, &[Msg::Enter, Msg::Down, Msg::Down, Msg::Down]);
    press(&mut app, &chars("35"));
    press(
        &mut app,
        &[Msg::Enter, Msg::Down, Msg::Down, Msg::Down, Msg::Down],
    );
    press(&mut app, &chars("1.5"));
    press(&mut app, &[Msg::Enter]);
    println!("keys: {n}");
    let (s, _) = on_disk(&app);
    assert_eq!((s.mains.vrms, s.mains.hz), (120.0, 60.0));
    assert_eq!(
        (
            s.transformer.primary_vrms,
            s.transformer.secondary_vrms,
            s.transformer.rated_va,
            s.transformer.secondary_ohms
        ),
        (Some(120.0), Some(24.0), Some(36.0), None)
    );
    assert_eq!(s.rectifier.topology.key(), "bridge");
    assert_eq!((s.filter.uf, s.filter.rated_v), (Some(4700.0), Some(35.0)));
    assert_eq!(s.load.amps, Some(1.5));
    assert!(n <= 60, "{n} keys");
}

#[test]
fn ctrl_z_suspends_and_other_ctrl_letters_do_nothing() {
    let (mut app, _) = demo("ctrl");
    select(&mut app, PUMP);
    let before = app.open.as_ref().unwrap().supply.clone();
    keys(&mut app, &[Msg::Ctrl('x'), Msg::Ctrl('u'), Msg::Ctrl('d')]);
    assert!(
        app.open.as_ref().unwrap().what_if.is_none(),
        "Ctrl-X is not x"
    );
    assert_eq!(app.mode, Mode::Normal);
    assert_eq!(app.open.as_ref().unwrap().supply, before);
    keys(&mut app, &[Msg::Suspend]);
    assert!(app.suspend, "the terminal loop is asked to suspend");
    assert_eq!(
        app.open.as_ref().unwrap().supply,
        before,
        "and nothing is undone"
    );
    // The key table lists Ctrl-Z in the help.
    keys(&mut app, &[Msg::Char('?')]);
    assert!(screen(&app, 100, 40).contains("Ctrl-Z"));
}

#[test]
fn the_highlight_follows_the_open_supply_and_delete_copy_act_on_it() {
    let (mut app, dir) = demo("highlight");
    select(&mut app, PUMP);
    // A filter that keeps it, then cleared: the highlight is still on it.
    keys(&mut app, &[Msg::Char('/')]);
    typed(&mut app, "pump");
    keys(&mut app, &[Msg::Escape]);
    let hl = app.highlighted().unwrap().file.clone();
    assert_eq!(hl, app.open.as_ref().unwrap().entry.file);
    // Rename it: still highlighted.
    go_to(&mut app, "name");
    keys(&mut app, &[Msg::Enter, Msg::Ctrl('u')]);
    typed(&mut app, "Zeta pump rail");
    keys(&mut app, &[Msg::Enter]);
    assert_eq!(
        app.highlighted().unwrap().file,
        app.open.as_ref().unwrap().entry.file
    );
    // c copies the highlighted supply and says which.
    let n = app.entries.len();
    keys(&mut app, &[Msg::Char('c')]);
    assert_eq!(app.entries.len(), n + 1);
    assert!(
        app.status.starts_with("Zeta pump rail copied"),
        "{}",
        app.status
    );
    // D names what it deletes; T lists the trash and Enter restores it.
    keys(&mut app, &[Msg::Char('D')]);
    let name = match &app.mode {
        Mode::Confirm(Confirm::Delete { name, .. }) => name.clone(),
        other => panic!("{other:?}"),
    };
    assert!(screen(&app, 100, 30).contains(&format!("Move {name}")));
    keys(&mut app, &[Msg::Char('y')]);
    assert_eq!(app.entries.len(), n);
    assert!(std::fs::read_dir(dir.join(".trash")).unwrap().count() == 1);
    keys(&mut app, &[Msg::Char('T')]);
    assert!(screen(&app, 100, 30).contains(&name));
    keys(&mut app, &[Msg::Enter]);
    assert_eq!(app.entries.len(), n + 1);
    assert_eq!(app.open.as_ref().unwrap().supply.name, name);
    assert!(app.status.contains("restored"), "{}", app.status);
}

#[test]
fn a_visit_records_who_and_what_was_replaced_and_esc_asks_before_dropping_it() {
    let (mut app, _) = demo("visit-form");
    select(&mut app, PUMP);
    let visits = app.open.as_ref().unwrap().supply.visits.len();
    // Typed readings, then Esc: asked, and n goes back to the form with them.
    keys(&mut app, &[Msg::Char('a')]);
    typed(&mut app, "229");
    keys(&mut app, &[Msg::Escape]);
    assert!(matches!(app.mode, Mode::Confirm(Confirm::DropVisit(_))));
    keys(&mut app, &[Msg::Char('n')]);
    match &app.mode {
        Mode::Visit(f) => assert_eq!(f.values[2], "229"),
        other => panic!("{other:?}"),
    }
    // A typed 2k for the mains is refused before it becomes a record.
    keys(&mut app, &[Msg::Backspace, Msg::Backspace, Msg::Backspace]);
    typed(&mut app, "2k");
    keys(&mut app, &[Msg::Enter]);
    match &app.mode {
        Mode::Visit(f) => assert!(f.error.as_ref().unwrap().contains("2000"), "{f:?}"),
        other => panic!("{other:?}"),
    }
    // Technician, readings, a replaced capacitor.
    keys(&mut app, &[Msg::Ctrl('u')]);
    typed(&mut app, "229");
    keys(&mut app, &[Msg::Up]);
    typed(&mut app, "R. Okafor");
    keys(&mut app, &[Msg::Down, Msg::Down, Msg::Down]);
    typed(&mut app, "27.4");
    for _ in 0..5 {
        keys(&mut app, &[Msg::Down]);
    }
    typed(&mut app, "C4 2200uF 50V");
    keys(&mut app, &[Msg::Enter]);
    assert_eq!(app.mode, Mode::Normal, "{:?}", app.mode);
    let (s, _) = on_disk(&app);
    assert_eq!(s.visits.len(), visits + 1);
    let v = s.visits.last().unwrap();
    assert_eq!(v.technician, "R. Okafor");
    assert_eq!(v.replaced, vec!["C4 2200uF 50V".to_string()]);
    assert!(app.status.contains("trend starts again"), "{}", app.status);
}

/// Issue 13's rows: a supply taken off its transformer (asked first, the transformer's values
/// named), the line's rows then on the form, a constant-power load, and a three-phase
/// topology setting the mains to three phases.
#[test]
fn a_supply_goes_straight_off_the_line_with_a_converter_load_and_three_phases() {
    let (mut app, _) = demo("off-line");
    select(&mut app, PUMP);
    let shown = screen(&app, 120, 40);
    assert!(
        !shown.contains("Line ohm"),
        "a transformer's unit shows no line rows"
    );
    go_to(&mut app, "transformer.form");
    // ratio -> nameplate -> none: two steps right, each asked.
    keys(&mut app, &[Msg::Right, Msg::Char('y'), Msg::Right]);
    match &app.mode {
        Mode::Confirm(Confirm::Drop { drops, .. }) => {
            assert!(
                drops
                    .iter()
                    .any(|d| d.starts_with("transformer.primary_vrms")),
                "{drops:?}"
            )
        }
        other => panic!("asked nothing: {other:?}"),
    }
    keys(&mut app, &[Msg::Char('y')]);
    assert!(app.open.as_ref().unwrap().supply.transformer.is_absent());
    go_to(&mut app, "line.ohms");
    typed(&mut app, "0.5");
    keys(&mut app, &[Msg::Enter]);
    go_to(&mut app, "load.kind");
    // Round the kinds (resistance, current, power) to the converter.
    for _ in 0..3 {
        if app.open.as_ref().unwrap().supply.load.watts.is_some() {
            break;
        }
        keys(&mut app, &[Msg::Right]);
        if matches!(app.mode, Mode::Confirm(_)) {
            keys(&mut app, &[Msg::Char('y')]);
        }
    }
    let s = app.open.as_ref().unwrap().supply.clone();
    assert!(
        s.load.watts.is_some() && s.load.amps.is_none(),
        "{:?}",
        s.load
    );
    assert_eq!(s.line.as_ref().and_then(|l| l.ohms), Some(0.5));
    // The picker: bridge, then down three to three-phase-bridge (past the doubler and the
    // split rail, which has no center tap to return to without a transformer).
    go_to(&mut app, "rectifier.topology");
    keys(
        &mut app,
        &[Msg::Enter, Msg::Down, Msg::Down, Msg::Down, Msg::Enter],
    );
    app.wait_idle();
    let (saved, _) = on_disk(&app);
    assert_eq!(
        saved.rectifier.topology,
        railcheck::supply::Topology::ThreePhaseBridge
    );
    assert_eq!(saved.mains.phases, 3);
    assert!(saved.transformer.is_absent() && saved.load.watts.is_some());
    let shown = screen(&app, 120, 40);
    assert!(
        shown.contains("Line ohm") && shown.contains("Line RMS"),
        "{shown}"
    );
}
