//! The screen's speed: start to first frame on a 1,000-supply library, and key press to the
//! redrawn frame after an edit (the solve, the worst case, the save and the draw).
//! Run: cargo bench --bench tui

use criterion::{Criterion, criterion_group, criterion_main};
use railcheck::library::Library;
use railcheck::tui::app::{App, Msg};
use ratatui::Terminal;
use ratatui::backend::TestBackend;
use std::hint::black_box;

#[path = "library.rs"]
#[allow(dead_code)]
mod library_bench;

fn draw(app: &App, t: &mut Terminal<TestBackend>) {
    t.draw(|f| railcheck::tui::view::view(app, f)).unwrap();
}

fn tui(c: &mut Criterion) {
    let dir = library_bench::big_library(1000);
    let mut g = c.benchmark_group("tui");
    g.sample_size(20);
    g.bench_function("start_to_first_frame_1000_supplies", |b| {
        b.iter(|| {
            let app = App::new(Library::open(&dir, false).unwrap()).unwrap();
            let mut t = Terminal::new(TestBackend::new(100, 30)).unwrap();
            draw(&app, &mut t);
            black_box(t.backend().buffer().area);
        })
    });
    // An edit of the capacitance: Enter, type, Enter (solve + worst case + low corner +
    // safe save), then the frame.
    let edit_dir = std::env::temp_dir().join("railcheck-bench-tui-edit");
    let _ = std::fs::remove_dir_all(&edit_dir);
    let mut app = App::new(Library::open(&edit_dir, true).unwrap()).unwrap();
    // The pump-house relay rail, by name: the demo list grows and reorders.
    for _ in 0..20 {
        if app.open.as_ref().map(|o| o.supply.name.as_str()) == Some("Pump-house 2, relay rail") {
            break;
        }
        app.update(Msg::Down);
    }
    assert_eq!(
        app.open.as_ref().map(|o| o.supply.name.as_str()),
        Some("Pump-house 2, relay rail")
    );
    app.update(Msg::NextPanel);
    // To the capacitor's row, by its file key (the form shows only the rows that apply).
    let fields = railcheck::tui::fields::FIELDS;
    for _ in 0..fields.len() {
        if fields[app.open.as_ref().unwrap().field].path == "filter.uf" {
            break;
        }
        app.update(Msg::Down);
    }
    let mut t = Terminal::new(TestBackend::new(100, 30)).unwrap();
    let mut flip = false;
    // Enter, the new value (the old one is selected: the first key replaces it), Enter, and
    // Up back to the row (Enter moves on to the next one).
    let mut edit = move |app: &mut App| {
        flip = !flip;
        let value = if flip { "1500" } else { "2200" };
        app.update(Msg::Enter);
        for ch in value.chars() {
            app.update(Msg::Char(ch));
        }
        app.update(Msg::Enter);
        app.update(Msg::Up);
        value
    };
    // The edit is taken, not lost on the way (a bench of nothing measures nothing).
    let first = edit(&mut app);
    assert_eq!(
        app.open.as_ref().unwrap().supply.filter.uf,
        Some(first.parse().unwrap())
    );
    g.bench_function("key_to_frame_after_edit_with_save", |b| {
        b.iter(|| {
            edit(&mut app);
            draw(&app, &mut t);
        })
    });
    app.update(Msg::Char('x'));
    g.bench_function("key_to_frame_after_edit_what_if", |b| {
        b.iter(|| {
            edit(&mut app);
            draw(&app, &mut t);
        })
    });
    g.finish();
}

criterion_group!(benches, tui);
criterion_main!(benches);
