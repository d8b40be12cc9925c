//! Writes the main screens as SVG images (colours kept) into screenshots/, from the same
//! TestBackend buffer the snapshot tests read.
//!
//! Run: cargo run --example screenshots

use railcheck::library::Library;
use railcheck::tui::app::{App, Msg};
use ratatui::Terminal;
use ratatui::backend::TestBackend;
use ratatui::buffer::Buffer;
use ratatui::style::{Color, Modifier};
use std::fmt::Write as _;

fn hex(c: Color, default: &str) -> String {
    match c {
        Color::Reset => default.to_string(),
        Color::Black => "#000000".into(),
        Color::Red => "#cd3131".into(),
        Color::Green => "#0dbc79".into(),
        Color::Yellow => "#e5e510".into(),
        Color::Blue => "#2472c8".into(),
        Color::Magenta => "#bc3fbc".into(),
        Color::Cyan => "#11a8cd".into(),
        Color::Gray => "#e5e5e5".into(),
        Color::DarkGray => "#808080".into(),
        Color::LightRed => "#f14c4c".into(),
        Color::LightGreen => "#23d18b".into(),
        Color::LightYellow => "#f5f543".into(),
        Color::LightBlue => "#3b8eea".into(),
        Color::LightMagenta => "#d670d6".into(),
        Color::LightCyan => "#29b8db".into(),
        Color::White => "#ffffff".into(),
        Color::Rgb(r, g, b) => format!("#{r:02x}{g:02x}{b:02x}"),
        Color::Indexed(_) => default.to_string(),
    }
}

fn svg(buf: &Buffer) -> String {
    let (cw, ch) = (8.4_f64, 17.0_f64);
    let w = buf.area.width as f64 * cw;
    let h = buf.area.height as f64 * ch;
    let mut out = String::new();
    let _ = writeln!(
        out,
        r#"<svg xmlns="http://www.w3.org/2000/svg" width="{w}" height="{h}" font-family="DejaVu Sans Mono, monospace" font-size="14">"#
    );
    let _ = writeln!(
        out,
        r##"<rect width="100%" height="100%" fill="#1e1e1e"/>"##
    );
    for y in 0..buf.area.height {
        for x in 0..buf.area.width {
            let cell = &buf[(x, y)];
            let reversed = cell.modifier.contains(Modifier::REVERSED);
            let (mut fg, mut bg) = (hex(cell.fg, "#d4d4d4"), hex(cell.bg, "#1e1e1e"));
            if reversed {
                std::mem::swap(&mut fg, &mut bg);
            }
            let (px, py) = (x as f64 * cw, y as f64 * ch);
            if bg != "#1e1e1e" {
                let _ = writeln!(
                    out,
                    r#"<rect x="{px}" y="{py}" width="{cw}" height="{ch}" fill="{bg}"/>"#
                );
            }
            let sym = cell.symbol();
            if sym.trim().is_empty() {
                continue;
            }
            let text = sym
                .replace('&', "&amp;")
                .replace('<', "&lt;")
                .replace('>', "&gt;");
            let weight = if cell.modifier.contains(Modifier::BOLD) {
                r#" font-weight="bold""#
            } else {
                ""
            };
            let _ = writeln!(
                out,
                r#"<text x="{px}" y="{}" fill="{fg}"{weight}>{text}</text>"#,
                py + ch * 0.78
            );
        }
    }
    out.push_str("</svg>\n");
    out
}

fn shot(app: &App, name: &str, w: u16, h: u16) {
    let mut t = Terminal::new(TestBackend::new(w, h)).unwrap();
    t.draw(|f| railcheck::tui::view::view(app, f)).unwrap();
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("screenshots")
        .join(format!("{name}.svg"));
    std::fs::write(&path, svg(t.backend().buffer())).unwrap();
    println!("wrote {}", path.display());
}

fn main() {
    let dir = std::env::temp_dir()
        .join("railcheck-screenshots")
        .join("demo-lib");
    let _ = std::fs::remove_dir_all(&dir);
    let mut app = App::new(Library::open(&dir, true).unwrap()).unwrap();
    app.color = true;
    for _ in 0..3 {
        app.update(Msg::Down);
    }
    shot(&app, "main-100x30", 100, 30);
    shot(&app, "main-80x24", 80, 24);
    app.update(Msg::Char('w'));
    shot(&app, "low-corner-100x30", 100, 30);
    app.update(Msg::Char('w'));
    app.update(Msg::Char('x'));
    app.update(Msg::NextPanel);
    go_to(&mut app, "filter.uf");
    app.update(Msg::Enter);
    for c in "1000".chars() {
        app.update(Msg::Char(c));
    }
    app.update(Msg::Enter);
    shot(&app, "what-if-100x30", 100, 30);
    app.update(Msg::Char('x'));
    app.update(Msg::Char('d'));
    app.update(Msg::Char('v'));
    shot(&app, "visits-100x30", 100, 30);
    app.update(Msg::Char('v'));
    app.update(Msg::Char('?'));
    shot(&app, "help-80x24", 80, 24);
    app.update(Msg::Escape);
    // The transformer switched to its nameplate: the question before the ratio goes.
    go_to(&mut app, "transformer.form");
    app.update(Msg::Right);
    shot(&app, "nameplate-question-100x30", 100, 30);
    app.update(Msg::Char('n'));
    shot(&app, "too-small-60x20", 60, 20);
    // A pi filter: the hall amplifier's HT rail, its choke's rows in the form and the results.
    app.panel = railcheck::tui::app::Panel::List;
    for _ in 0..app.entries.len() {
        app.update(Msg::Up);
    }
    while app.open.as_ref().expect("open").supply.name != "Members' hall PA amplifier, HT rail" {
        app.update(Msg::Down);
    }
    app.update(Msg::NextPanel);
    go_to(&mut app, "filter.choke_h");
    shot(&app, "choke-100x30", 100, 30);
    // A three-phase drive bus straight off the line: the line's rows and the line's figures.
    app.panel = railcheck::tui::app::Panel::List;
    for _ in 0..app.entries.len() {
        app.update(Msg::Up);
    }
    while app.open.as_ref().expect("open").supply.name != "Raw-water lift pump, drive DC bus" {
        app.update(Msg::Down);
    }
    app.wait_idle();
    app.update(Msg::NextPanel);
    go_to(&mut app, "line.reactor_pct");
    shot(&app, "drive-bus-100x30", 100, 30);
    // A rectifier valve: its law and limits above the results, the solid-state what-if (S)
    // under the figures, scrolled into view.
    app.panel = railcheck::tui::app::Panel::List;
    for _ in 0..app.entries.len() {
        app.update(Msg::Up);
    }
    while app.open.as_ref().expect("open").supply.name
        != "Members' hall gramophone amplifier, HT rail"
    {
        app.update(Msg::Down);
    }
    app.wait_idle();
    // S also puts the focus on the results.
    app.update(Msg::Char('S'));
    for _ in 0..2 {
        app.update(Msg::PageDown);
    }
    shot(&app, "valve-solid-state-100x30", 100, 30);
}

/// Moves the form's cursor to the row of the file key `path`.
fn go_to(app: &mut App, path: &str) {
    use railcheck::tui::fields::FIELDS;
    app.panel = railcheck::tui::app::Panel::Form;
    for _ in 0..FIELDS.len() {
        app.update(Msg::Up);
    }
    for _ in 0..FIELDS.len() {
        if FIELDS[app.open.as_ref().expect("open").field].path == path {
            return;
        }
        app.update(Msg::Down);
    }
}
