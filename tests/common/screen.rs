//! Driving the screen in a test: a fresh demo library, key sequences as a technician types
//! them, moving to a form row by its file key, and the screen as text (ratatui's TestBackend).

use railcheck::library::Library;
use railcheck::tui::app::{App, Msg, Panel};
use railcheck::tui::fields::FIELDS;
use ratatui::Terminal;
use ratatui::backend::TestBackend;
use std::path::PathBuf;

/// A fresh demo library in a folder whose last two parts are fixed (`TAG/demo-lib`), so the
/// screen's title is stable; colour off.
pub fn demo(tag: &str) -> (App, PathBuf) {
    let dir = std::env::temp_dir()
        .join(format!("railcheck-tui-{}", std::process::id()))
        .join(tag)
        .join("demo-lib");
    let _ = std::fs::remove_dir_all(&dir);
    let lib = Library::open(&dir, true).unwrap();
    let mut app = App::new(lib).unwrap();
    app.color = false;
    (app, dir)
}

pub fn keys(app: &mut App, msgs: &[Msg]) {
    for m in msgs {
        app.update(m.clone());
    }
}

pub fn typed(app: &mut App, text: &str) {
    for c in text.chars() {
        app.update(Msg::Char(c));
    }
}

/// The screen drawn at `w` x `h`, as text.
pub fn screen(app: &App, w: u16, h: u16) -> String {
    let mut t = Terminal::new(TestBackend::new(w, h)).unwrap();
    t.draw(|f| railcheck::tui::view::view(app, f)).unwrap();
    t.backend().to_string()
}

/// Moves the form's cursor to the row of the file key `path`: the form gets the keys, then Up
/// to the top and Down until there.
pub fn go_to(app: &mut App, path: &str) {
    app.panel = Panel::Form;
    for _ in 0..FIELDS.len() {
        app.update(Msg::Up);
    }
    for _ in 0..FIELDS.len() {
        if FIELDS[app.open.as_ref().unwrap().field].path == path {
            return;
        }
        app.update(Msg::Down);
    }
    panic!("no row {path} in the form");
}

/// Types `text` into the row of `path` as a technician would: there, Enter, type (the old
/// value, selected, goes with the first key), Enter.
pub fn set_field(app: &mut App, path: &str, text: &str) {
    go_to(app, path);
    app.update(Msg::Enter);
    typed(app, text);
    app.update(Msg::Enter);
}
