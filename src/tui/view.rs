//! Draws the whole screen from the state alone: title, list, form, results, sketch, the
//! caution line, the status line, and whatever dialog is open.

use super::app::{App, Confirm, Mode, VISIT_FIELDS};
use super::form_panel::FormPanel;
use super::help::Help;
use super::list_panel::ListPanel;
use super::results_panel::ResultsPanel;
use super::sketch::Sketch;
use super::style::Look;
use crate::supply::Topology;
use ratatui::Frame;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Clear, Paragraph, Widget, Wrap};

/// Renders `app` into the frame.
pub fn view(app: &App, frame: &mut Frame) {
    let area = frame.area();
    let buf = frame.buffer_mut();
    draw(app, area, buf);
}

/// Renders `app` into `area` of `buf` (the same as [`view`], for tests and screenshots).
pub fn draw(app: &App, area: Rect, buf: &mut ratatui::buffer::Buffer) {
    let look = Look::new(app.color);
    let [title, body, caution, status] = Layout::vertical([
        Constraint::Length(1),
        Constraint::Min(8),
        Constraint::Length(1),
        Constraint::Length(1),
    ])
    .areas(area);
    let left_w = (area.width * 35 / 100).max(28).min(area.width / 2);
    let [left, right] =
        Layout::horizontal([Constraint::Length(left_w), Constraint::Min(20)]).areas(body);
    // At least four rows (or all there are), at most a third of the body.
    let list_h = (app.entries.len() as u16 + 2)
        .min(body.height / 3 + 1)
        .max(4.min(body.height));
    let [list, form] =
        Layout::vertical([Constraint::Length(list_h), Constraint::Min(4)]).areas(left);
    let sketch_h = (body.height / 3).max(7).min(body.height / 2);
    let [results, sketch] =
        Layout::vertical([Constraint::Min(6), Constraint::Length(sketch_h)]).areas(right);

    let mut head = vec![Span::styled("railcheck ", look.heading())];
    // The folder's last two parts: enough to tell libraries apart on a narrow screen.
    let parts: Vec<String> = app
        .library
        .dir
        .components()
        .rev()
        .take(2)
        .map(|c| c.as_os_str().to_string_lossy().into_owned())
        .collect();
    let short: Vec<&str> = parts.iter().rev().map(String::as_str).collect();
    head.push(Span::raw(format!(
        "| library .../{} | {} supplies ",
        short.join("/"),
        app.entries.len()
    )));
    if let Some(o) = &app.open
        && o.what_if.is_some()
    {
        head.push(Span::styled("| WHAT-IF (scratch) ", look.warn()));
    }
    Paragraph::new(Line::from(head)).render(title, buf);
    ListPanel(app).render(list, buf);
    FormPanel(app).render(form, buf);
    ResultsPanel(app).render(results, buf);
    Sketch(app).render(sketch, buf);

    // Mains is always a hazard; say so with the stored energy (and the discharge time when a
    // bleeder or load gives one), shortened to fit rather than cut off.
    let solved = app
        .open
        .as_ref()
        .and_then(|o| o.solved.as_ref().as_ref().ok());
    let stored = solved.map(|s| {
        // The same peak and capacitance as the report's caution: the rail at high line, lightest
        // or no load, with the capacitance seen across the rail (a doubler's two in series).
        let peak = s.stress_peak_v;
        let farads =
            crate::analysis::cautions::rail_farads(&app.open.as_ref().expect("open").supply);
        (
            crate::analysis::cautions::stored_energy_j(farads, peak),
            peak,
        )
    });
    let discharge = solved
        .and_then(|s| s.cautions.iter().find(|c| c.starts_with("Discharge")))
        .map(|c| c.trim_start_matches("Discharge: ").to_string());
    let long = match (&stored, &discharge) {
        (Some((j, v)), Some(d)) => format!(
            "CAUTION mains can kill; {j:.2} J stored at {v:.1} V; {d} Meter before touching; local codes and licensed practice apply."
        ),
        (Some((j, v)), None) => format!(
            "CAUTION mains can kill; {j:.2} J stored at {v:.1} V. Meter before touching; local codes and licensed practice apply."
        ),
        _ => "CAUTION mains and charged capacitors can kill: meter before touching; local codes and licensed practice apply.".to_string(),
    };
    // Shorter and shorter wordings; every one keeps the hazard, the energy and the deferral to
    // local codes, so a narrow screen loses words, not the warning.
    let seconds = solved
        .and_then(|s| s.cautions.iter().find(|c| c.starts_with("Discharge")))
        .and_then(|c| c.split("in about ").nth(1))
        .and_then(|t| t.split(' ').next())
        .map(|t| format!(", {t} s to discharge"))
        .unwrap_or_default();
    let shorter = match &stored {
        Some((j, v)) => vec![
            format!(
                "CAUTION mains can kill; {j:.2} J at {v:.1} V stored{seconds}. Meter first; local codes and licensed practice apply."
            ),
            format!(
                "CAUTION mains can kill; {j:.2} J at {v:.1} V{seconds}. Meter first; local codes apply."
            ),
            format!("CAUTION mains kills; {j:.2} J at {v:.1} V. Meter first; local codes apply."),
        ],
        None => vec![
            "CAUTION mains can kill. Meter first; local codes and licensed practice apply.".into(),
        ],
    };
    let fits = |t: &String| t.chars().count() <= caution.width as usize;
    let caution_text = std::iter::once(long)
        .chain(shorter.clone())
        .find(fits)
        .unwrap_or_else(|| shorter.last().cloned().unwrap_or_default());
    Paragraph::new(Line::styled(caution_text, look.caution())).render(caution, buf);
    let hint = match &app.mode {
        Mode::Editing { .. } => match app.open.as_ref() {
            Some(o) => match &o.field_error {
                Some((_, why)) => format!("refused: {why}"),
                None => format!(
                    "Enter applies, Esc cancels (4k7, 47u, 2m2); {}",
                    super::fields::FIELDS[o.field].help_line()
                ),
            },
            None => String::new(),
        },
        Mode::Filter => "filter: type to narrow the list, Enter keeps, Esc clears".into(),
        _ => match &app.open {
            Some(o)
                if app.panel == super::app::Panel::Form
                    && super::fields::FIELDS[o.field].is_choice() =>
            {
                format!(
                    "Left/Right or Enter changes {}   |   {}",
                    super::fields::FIELDS[o.field].label,
                    app.status
                )
            }
            _ => app.status.clone(),
        },
    };
    Paragraph::new(Line::styled(hint, look.dim())).render(status, buf);

    match &app.mode {
        Mode::Help => Help { color: app.color }.render(area, buf),
        Mode::Confirm(Confirm::Delete { name, .. }) => dialog(
            area,
            buf,
            &look,
            "Delete",
            vec![
                format!("Move {name} to the library's .trash folder?"),
                "y: move it (T lists the trash and restores)   n / Esc: keep it".into(),
            ],
        ),
        Mode::Confirm(Confirm::EndWhatIf) => dialog(
            area,
            buf,
            &look,
            "End what-if",
            vec![
                "Keep the what-if values as edits, or discard them?".into(),
                "k: keep   d / Esc: discard (back to the supply as it was)".into(),
            ],
        ),
        Mode::NewSupply { topology } => {
            let mut lines = vec!["New supply from a template; choose the topology:".to_string()];
            for (i, t) in Topology::ALL.iter().enumerate() {
                lines.push(format!(
                    "{} {}",
                    if i == *topology { ">" } else { " " },
                    t.key()
                ));
            }
            lines.push("Up/Down choose, Enter create, Esc cancel".into());
            dialog(area, buf, &look, "New supply", lines);
        }
        Mode::Visit(form) => {
            let mut lines = Vec::new();
            for (i, ((label, _), value)) in VISIT_FIELDS.iter().zip(&form.values).enumerate() {
                let mark = if i == form.field { ">" } else { " " };
                let cursor = if i == form.field { "_" } else { "" };
                lines.push(format!("{mark} {label:<22} {value}{cursor}"));
            }
            if let Some(e) = &form.error {
                lines.push(format!("! {e}"));
            }
            lines.push(
                "Up/Down move, type the readings (any may stay empty), Enter saves, Esc cancels"
                    .into(),
            );
            dialog(area, buf, &look, "Record a visit", lines);
        }
        Mode::Conflict => dialog(
            area,
            buf,
            &look,
            "File changed on disk",
            vec![
                "Another program changed this supply's file since it was opened.".into(),
                "r: reload theirs (your edits are dropped)".into(),
                "k: keep mine as a new supply beside theirs".into(),
                "Esc: decide later (nothing is written)".into(),
            ],
        ),
        _ => super::dialogs::render(app, area, buf, &look),
    }
}

/// A box of `lines` over the middle of `area` (also for the other dialogs' module).
pub(super) fn dialog(
    area: Rect,
    buf: &mut ratatui::buffer::Buffer,
    look: &Look,
    title: &str,
    lines: Vec<String>,
) {
    let rect = super::style::centered(area, 72, lines.len() as u16 + 2);
    Clear.render(rect, buf);
    let text: Vec<Line> = lines.into_iter().map(Line::from).collect();
    Paragraph::new(text)
        .wrap(Wrap { trim: true })
        .block(look.panel(title, true))
        .render(rect, buf);
}
