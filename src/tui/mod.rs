//! The terminal screen, as model (app), update (app::update, fed by keys here) and view. This
//! module alone touches the terminal.

pub mod app;
pub mod fields;
pub mod form_panel;
pub mod help;
pub mod list_panel;
pub mod results_panel;
pub mod sketch;
pub mod style;
pub mod trend_chart;
pub mod view;

use app::{App, Msg};
use crossterm::event::{self, Event, KeyCode, KeyEvent, KeyEventKind, KeyModifiers};

/// The message a key press means, whatever the mode (the mode reads characters itself).
pub fn message(key: KeyEvent) -> Option<Msg> {
    if key.kind == KeyEventKind::Release {
        return None;
    }
    let ctrl = key.modifiers.contains(KeyModifiers::CONTROL);
    Some(match key.code {
        KeyCode::Char('c') if ctrl => Msg::Quit,
        KeyCode::Char('r') if ctrl => Msg::Redo,
        KeyCode::Char('z') if ctrl => Msg::Undo,
        KeyCode::Char(c) => Msg::Char(c),
        KeyCode::Up => Msg::Up,
        KeyCode::Down => Msg::Down,
        KeyCode::Left => Msg::Left,
        KeyCode::Right => Msg::Right,
        KeyCode::Tab => Msg::NextPanel,
        KeyCode::BackTab => Msg::PrevPanel,
        KeyCode::Enter => Msg::Enter,
        KeyCode::Esc => Msg::Escape,
        KeyCode::Backspace => Msg::Backspace,
        KeyCode::Delete => Msg::Delete,
        KeyCode::F(1) => Msg::Help,
        _ => return None,
    })
}

/// Runs the screen on `app` until the technician quits. The terminal is restored on the way
/// out, on an error and on a panic (ratatui's hook).
pub fn run(mut app: App) -> anyhow::Result<()> {
    let mut terminal = ratatui::init();
    let result = (|| -> anyhow::Result<()> {
        while !app.quit {
            terminal.draw(|f| view::view(&app, f))?;
            // Resize events simply fall through to the next draw at the new size.
            if let Event::Key(key) = event::read()?
                && let Some(msg) = message(key)
            {
                app.update(msg);
            }
        }
        Ok(())
    })();
    ratatui::restore();
    result
}
