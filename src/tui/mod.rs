//! The terminal screen, as model (app), update (app::update, fed by keys here) and view. This
//! module alone touches the terminal.

pub mod app;
pub mod dialogs;
pub mod fields;
pub mod form_panel;
pub mod help;
pub mod keys;
pub mod line_editor;
pub mod list_panel;
pub mod results_panel;
pub mod sketch;
pub mod style;
pub mod trend_chart;
pub mod view;
pub mod worker;

use app::{App, Msg};
use crossterm::event::{self, Event, KeyCode, KeyEvent, KeyEventKind, KeyModifiers};
use std::time::Duration;

/// One frame at about 60 per second: how long a key may wait for an answer.
const FRAME: Duration = Duration::from_millis(16);

/// The message a key press means, whatever the mode (the mode reads characters itself).
/// Ctrl-C quits and Ctrl-Z suspends everywhere; any other Ctrl+letter arrives as itself,
/// never as its letter, so Ctrl-X cannot open what-if by accident.
pub fn message(key: KeyEvent) -> Option<Msg> {
    if key.kind == KeyEventKind::Release {
        return None;
    }
    let ctrl = key.modifiers.contains(KeyModifiers::CONTROL);
    let alt = key.modifiers.contains(KeyModifiers::ALT);
    Some(match key.code {
        KeyCode::Char('c') if ctrl => Msg::Quit,
        KeyCode::Char('z') if ctrl => Msg::Suspend,
        KeyCode::Char(c) if ctrl => Msg::Ctrl(c.to_ascii_lowercase()),
        // Alt+letter is no letter either (terminals send it for menu keys).
        KeyCode::Char(_) if alt => return None,
        KeyCode::Char(c) => Msg::Char(c),
        KeyCode::Up => Msg::Up,
        KeyCode::Down => Msg::Down,
        KeyCode::PageUp => Msg::PageUp,
        KeyCode::PageDown => Msg::PageDown,
        KeyCode::Left => Msg::Left,
        KeyCode::Right => Msg::Right,
        KeyCode::Home => Msg::Home,
        KeyCode::End => Msg::End,
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

/// Hands the terminal back to the shell until `fg` (Ctrl-Z), then takes it again and redraws
/// everything. Where job control does not exist, nothing happens.
fn suspend(terminal: &mut ratatui::DefaultTerminal) -> anyhow::Result<()> {
    #[cfg(unix)]
    {
        ratatui::restore();
        // SAFETY: raising a signal at our own process; the default action of SIGTSTP stops
        // it until SIGCONT, and then this call returns.
        unsafe {
            libc::raise(libc::SIGTSTP);
        }
        *terminal = ratatui::init();
        terminal.clear()?;
    }
    #[cfg(not(unix))]
    let _ = terminal;
    Ok(())
}

/// Runs the screen on `app` until the technician quits. The terminal is restored on the way
/// out, on an error and on a panic (ratatui's hook).
pub fn run(mut app: App) -> anyhow::Result<()> {
    let mut terminal = ratatui::init();
    // A key waits at most one frame for a solve; slower answers arrive while the keys go on.
    app.patience = Some(FRAME);
    let result = (|| -> anyhow::Result<()> {
        while !app.quit {
            terminal.draw(|f| view::view(&app, f))?;
            // While answers are on their way, look for them between keys; otherwise sleep
            // until a key (or a resize, which falls through to the next draw).
            let wait = if app.busy() {
                FRAME
            } else {
                Duration::from_secs(3600)
            };
            if event::poll(wait)?
                && let Event::Key(key) = event::read()?
                && let Some(msg) = message(key)
            {
                app.update(msg);
            }
            if std::mem::take(&mut app.suspend) {
                suspend(&mut terminal)?;
            }
            app.absorb();
        }
        Ok(())
    })();
    ratatui::restore();
    result
}
