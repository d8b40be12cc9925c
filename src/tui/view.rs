//! Draws the whole screen from the state alone: title, list, form, results, sketch, the
//! caution line, the status line, and whatever dialog is open.

use super::app::{App, Confirm, Mode, VISIT_FIELDS};
use super::form_panel::FormPanel;
use super::help::Help;
use super::list_panel::ListPanel;
use super::results_panel::ResultsPanel;
use super::sketch::Sketch;
use super::style::Look;
use crate::analysis::checks::Status;
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

/// The smallest screen the layout is drawn for; below it a plain notice takes its place.
pub const MIN_W: u16 = 80;
pub const MIN_H: u16 = 24;

/// Renders `app` into `area` of `buf` (the same as [`view`], for tests and screenshots).
pub fn draw(app: &App, area: Rect, buf: &mut ratatui::buffer::Buffer) {
    let look = Look::new(app.color);
    if area.width < MIN_W || area.height < MIN_H {
        too_small(app, area, buf, &look);
        return;
    }
    let caution_lines = caution(app, area.width as usize);
    let [title, body, checks_row, caution, status] = Layout::vertical([
        Constraint::Length(1),
        Constraint::Min(8),
        Constraint::Length(1),
        Constraint::Length(caution_lines.len() as u16),
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
    // The visits take the whole right side: the ripple sketch says nothing about them, and
    // their readings, windows and trend chart need the rows.
    let visits = app.open.as_ref().is_some_and(|o| o.show_visits);
    let sketch_h = if visits {
        0
    } else {
        (body.height / 3).max(7).min(body.height / 2)
    };
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
    if sketch_h > 0 {
        Sketch(app).render(sketch, buf);
    }
    Paragraph::new(checks_line(app, &look, checks_row.width as usize)).render(checks_row, buf);
    let text: Vec<Line> = caution_lines
        .into_iter()
        .map(|l| Line::styled(l, look.caution()))
        .collect();
    Paragraph::new(text).render(caution, buf);
    let hint = match &app.mode {
        Mode::Editing { .. } => match app.open.as_ref() {
            Some(o) => match &o.field_error {
                Some((_, why)) => format!("refused: {why}"),
                // The key and its range first: a narrow screen cuts the line's end.
                None => format!(
                    "{}  |  Enter applies, Esc cancels (4k7, 47u, 2m2)",
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

/// The caution for the open supply, in as few lines of `width` as it takes: one where the
/// whole of it fits, else two (the hazard and the energy, then which peak that is and why).
/// Every wording keeps the hazard, the energy and the deferral to local codes.
fn caution(app: &App, width: usize) -> Vec<String> {
    let open = app.open.as_ref();
    let solved = open.and_then(|o| o.solved.as_ref().as_ref().ok());
    let fits = |t: &String| t.chars().count() <= width;
    let first_fit = |options: Vec<String>| -> String {
        options
            .iter()
            .find(|t| fits(t))
            .or(options.last())
            .cloned()
            .unwrap_or_default()
    };
    let (Some(s), Some(o)) = (solved, open) else {
        return vec![first_fit(vec![
            "CAUTION mains and charged capacitors can kill: meter before touching; local codes and licensed practice apply.".into(),
            "CAUTION mains can kill. Meter first; local codes and licensed practice apply.".into(),
            "CAUTION mains kills. Meter first; local codes apply.".into(),
        ])];
    };
    // The same peak and capacitance as the report's caution: the rail at its highest (high
    // mains, highest secondary, lowest diode drop, cold winding, full sine) with the lightest
    // load, or none when the file states no lightest load; the capacitance seen across the
    // rail at its high tolerance (a doubler's two in series).
    let v = s.stress_peak_v;
    let j = crate::analysis::cautions::stored_energy_j(
        crate::analysis::cautions::rail_farads(&o.supply),
        v,
    );
    let high = o.supply.mains.high_pct;
    // A directly heated rectifier valve's rail soars at switch-on: said where the peak is.
    let warm_up = crate::analysis::valve::warm_up_soar(&o.supply);
    let load = if warm_up {
        "no load, as the valve warms up"
    } else if s.stress_no_load {
        "no load"
    } else {
        "the lightest load"
    };
    let load_short = if warm_up {
        "valve warm-up"
    } else if s.stress_no_load {
        "no load"
    } else {
        "lightest load"
    };
    let discharge = s
        .cautions
        .iter()
        .find(|c| c.starts_with("Discharge"))
        .map(|c| c.trim_start_matches("Discharge: ").to_string());
    let seconds = discharge
        .as_deref()
        .and_then(|c| c.split("in about ").nth(1))
        .and_then(|t| t.split(' ').next())
        .map(|t| format!(", {t} s to discharge"))
        .unwrap_or_default();
    let peak = format!("the rail's peak at high mains (+{high:.0} %) and {load}");
    let mut one = Vec::new();
    if let Some(d) = &discharge {
        one.push(format!(
            "CAUTION mains can kill; {j:.2} J stored at {v:.1} V, {peak}; {d} Meter before touching; local codes and licensed practice apply."
        ));
    }
    one.push(format!(
        "CAUTION mains can kill; {j:.2} J stored at {v:.1} V, {peak}{seconds}. Meter before touching; local codes and licensed practice apply."
    ));
    one.push(format!(
        "CAUTION mains can kill; {j:.2} J at {v:.1} V (peak at high mains, {load_short}){seconds}. Meter first; local codes apply."
    ));
    if let Some(line) = one.into_iter().find(fits) {
        return vec![line];
    }
    let first = first_fit(vec![
        format!(
            "CAUTION mains can kill; {j:.2} J stored at {v:.1} V{seconds}. Meter first; local codes and licensed practice apply."
        ),
        format!(
            "CAUTION mains can kill; {j:.2} J at {v:.1} V{seconds}. Meter first; local codes apply."
        ),
        format!("CAUTION mains kills; {j:.2} J at {v:.1} V. Meter first; local codes apply."),
    ]);
    let second = first_fit(vec![
        format!("{v:.1} V is {peak}: the most the filter holds."),
        format!(
            "{v:.1} V is the peak at high mains (+{high:.0} %), {load_short}: the most it holds."
        ),
        format!("{v:.1} V: peak at high mains, {load_short}."),
    ]);
    vec![first, second]
}

/// The rating checks in one line: how many fail and warn and which, else that all pass, so a
/// failed rating is in sight whatever the results panel shows.
fn checks_line(app: &App, look: &Look, width: usize) -> Line<'static> {
    let Some(o) = &app.open else {
        return Line::raw("");
    };
    let solved = match o.solved.as_ref() {
        Ok(s) => s,
        Err(_) if o.solving => return Line::styled("checks: working them out...", look.dim()),
        Err(_) => {
            return Line::styled(
                "checks: none, the supply cannot be solved (see the results)",
                look.fail(),
            );
        }
    };
    let ids = |st: Status| -> Vec<&'static str> {
        solved
            .checks
            .iter()
            .filter(|c| c.status == st)
            .map(|c| c.id)
            .collect()
    };
    let (fail, warn, ok) = (ids(Status::Fail), ids(Status::Warn), ids(Status::Ok));
    let stale = if o.solving { " (working...)" } else { "" };
    let not_rated = &solved.not_rated;
    let rated_none = |n: usize| match n {
        0 => String::new(),
        _ => format!("; {n} not rated"),
    };
    if fail.is_empty() && warn.is_empty() {
        let words = match ok.len() {
            0 => "checks: no ratings in the file to check".to_string(),
            n => format!("checks: all {n} OK"),
        };
        let long = if not_rated.is_empty() {
            format!("{words}{stale}")
        } else {
            format!("{words}; not rated: {}{stale}", not_rated.join(", "))
        };
        let text = if long.chars().count() <= width {
            long
        } else {
            format!("{words}{}{stale}", rated_none(not_rated.len()))
        };
        return Line::from(vec![
            Span::raw("checks: "),
            Span::styled(text["checks: ".len()..].to_string(), look.ok()),
        ]);
    }
    let mut spans = vec![Span::raw("checks: ")];
    if !fail.is_empty() {
        spans.push(Span::styled(format!("{} FAIL", fail.len()), look.fail()));
    }
    if !warn.is_empty() {
        if !fail.is_empty() {
            spans.push(Span::raw(" "));
        }
        spans.push(Span::styled(format!("{} WARN", warn.len()), look.warn()));
    }
    let used: usize = spans.iter().map(|s| s.content.chars().count()).sum();
    let tail = format!("; {} OK{}{stale}", ok.len(), rated_none(not_rated.len()));
    let named: Vec<&str> = fail.iter().chain(&warn).copied().collect();
    // The names that fit, the first always, the rest counted.
    let mut list = String::new();
    for (i, id) in named.iter().enumerate() {
        let more = named.len() - i - 1;
        let sep = if i == 0 { "" } else { ", " };
        let candidate = format!("{list}{sep}{id}");
        let rest = if more > 0 {
            format!(" and {more} more")
        } else {
            String::new()
        };
        if i > 0 && used + 2 + candidate.len() + rest.len() + tail.len() > width {
            list = format!("{list} and {} more", named.len() - i);
            break;
        }
        list = candidate;
    }
    spans.push(Span::raw(format!(": {list}{tail}")));
    Line::from(spans)
}

/// Below the smallest size: a plain notice with the size needed and the size now, the caution
/// in full, the open supply and its checks, rather than panels cut to nonsense.
fn too_small(app: &App, area: Rect, buf: &mut ratatui::buffer::Buffer, look: &Look) {
    let width = (area.width as usize).max(1);
    let wrap = |t: &str| super::style::wrap_words(t, width, 0);
    let mut lines: Vec<Line> = wrap(&format!(
        "railcheck needs {MIN_W}x{MIN_H}, now {}x{}",
        area.width, area.height
    ))
    .into_iter()
    .map(|l| Line::styled(l, look.heading()))
    .collect();
    // The caution in full where the rows allow, else its shortest wording; it comes before
    // anything else the notice says.
    let room = (area.height as usize).saturating_sub(lines.len()).max(1);
    let caution = [usize::MAX, width]
        .into_iter()
        .map(|w| wrap(&caution(app, w).join(" ")))
        .find(|l| l.len() <= room)
        .unwrap_or_else(|| wrap(&caution(app, width)[0]));
    lines.extend(caution.into_iter().map(|l| Line::styled(l, look.caution())));
    if let Some(o) = &app.open {
        lines.push(Line::raw(""));
        lines.extend(
            wrap(&format!("Open: {}", o.supply.name))
                .into_iter()
                .map(Line::raw),
        );
        lines.push(checks_line(app, look, width));
    }
    lines.push(Line::raw(""));
    if !matches!(app.mode, Mode::Normal) {
        lines.extend(
            wrap(&format!(
                "A dialog or an edit is open; it shows again at {MIN_W}x{MIN_H}."
            ))
            .into_iter()
            .map(Line::raw),
        );
    }
    lines.extend(
        wrap("Make the window larger to see the supply (Esc then q quits).")
            .into_iter()
            .map(Line::raw),
    );
    Paragraph::new(lines).render(area, buf);
}
