//! The screen's state (the model) and how messages change it (the update). Nothing here draws
//! or reads the terminal, so key sequences are tested by calling `update`.

use super::fields::{Change, FIELDS};
use super::keys::{Action, action};
use super::line_editor::{LineEditor, LineKey};
use super::worker::{Done, Job, Worker};
use crate::analysis::cautions::{SAFE_TOUCH_V, cautions};
use crate::analysis::checks::{self, Check};
use crate::analysis::worst_case::{self, WorstCase};
use crate::circuit::{self, HandEstimate, Operating};
use crate::library::{Entry, EntryState, Library, LibraryError};
use crate::supply::{Supply, Topology};
use crate::visit::Visit;
use std::time::{Duration, Instant};

/// The panel that has the keyboard.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Panel {
    List,
    Form,
    Results,
}

/// What the keys are doing now.
#[derive(Debug, Clone, PartialEq)]
pub enum Mode {
    Normal,
    /// Typing a new value into the form field.
    Editing {
        editor: LineEditor,
    },
    /// Choosing a choice field's word from a list.
    Picker {
        choice: usize,
    },
    /// The library's trash: deleted supplies, to restore one.
    Trash {
        items: Vec<crate::library::Trashed>,
        selected: usize,
    },
    /// Typing the list filter.
    Filter,
    Help,
    /// Asking before something that cannot be taken back from the keyboard.
    Confirm(Confirm),
    /// Choosing a topology for a new supply.
    NewSupply {
        topology: usize,
    },
    /// Typing readings for a new visit.
    Visit(VisitForm),
    /// The save was refused: the file changed on disk since it was loaded.
    Conflict,
}

#[derive(Debug, Clone, PartialEq)]
pub enum Confirm {
    /// Moving the highlighted supply's file to the trash.
    Delete {
        file: std::path::PathBuf,
        name: String,
    },
    /// Leaving what-if: keep the scratch values or go back.
    EndWhatIf,
    /// A change that drops values (`key = value` each), e.g. switching the transformer from
    /// its ratio to its nameplate.
    Drop {
        change: Box<Supply>,
        what: String,
        drops: Vec<String>,
    },
    /// Leaving a visit form that has readings typed in.
    DropVisit(VisitForm),
}

/// The readings form of a visit being recorded.
#[derive(Debug, Clone, PartialEq)]
pub struct VisitForm {
    pub field: usize,
    pub values: Vec<String>,
    pub error: Option<String>,
}

impl VisitForm {
    /// A new form dated `date`, the cursor on the mains.
    pub fn new(date: String) -> VisitForm {
        let mut values = vec![String::new(); VISIT_FIELDS.len()];
        values[0] = date;
        VisitForm {
            field: 2,
            values,
            error: None,
        }
    }

    /// Whether anything beyond the date was typed.
    pub fn touched(&self) -> bool {
        self.values.iter().skip(1).any(|v| !v.trim().is_empty())
    }
}

/// The readings a visit form asks for, in order, with their visit keys.
pub const VISIT_FIELDS: [(&str, &str); 11] = [
    ("Date (YYYY-MM-DD)", "date"),
    ("Technician", "technician"),
    ("Mains RMS V", "mains_vrms"),
    ("Secondary AC V", "secondary_vac"),
    ("DC V", "dc_v"),
    ("Ripple p-p V (scope)", "ripple_pp_v"),
    ("Ripple RMS V (meter)", "ripple_rms_v"),
    ("Ripple Hz", "ripple_hz"),
    ("Load A", "load_a"),
    ("Replaced (C1 4700uF, T1)", "replaced"),
    ("Notes", "notes"),
];

/// Everything the results panel and the sketch show for one supply.
#[derive(Debug, Clone)]
pub struct Solved {
    pub nominal: Operating,
    pub hand: HandEstimate,
    pub worst: WorstCase,
    pub checks: Vec<Check>,
    pub not_rated: Vec<&'static str>,
    pub cautions: Vec<String>,
    /// The rail's highest voltage at high line with the lightest (or no) load, volts: what the
    /// stored-energy caution is worked out at.
    pub stress_peak_v: f64,
    /// Whether that peak is at no load (no lightest load stated) rather than the lightest
    /// stated load: the caution line says which.
    pub stress_no_load: bool,
    /// The worst low corner, its words and its solve, for the sketch.
    pub low: Option<(String, Operating)>,
    /// A valve rectifier's supply with silicon in its place.
    pub solid_state: Option<crate::analysis::valve::SolidState>,
    /// The first capacitor's expected life, when the file gives its rating.
    pub capacitor_life: Option<crate::analysis::capacitor_life::CapacitorLife>,
}

/// Solves `supply` for the screen: nominal, worst case, checks, cautions, low corner.
pub fn solve_for_screen(supply: &Supply) -> Result<Solved, String> {
    solve_for_screen_while(supply, &|| true).expect("never stopped")
}

/// As [`solve_for_screen`], asking `keep_going` between its stages (nominal, worst case,
/// voltage stress, low corner) and giving up with None when it says no: the screen's worker
/// stops a solve that a newer edit has made moot.
pub fn solve_for_screen_while(
    supply: &Supply,
    keep_going: &dyn Fn() -> bool,
) -> Option<Result<Solved, String>> {
    let (nominal, hand) = match circuit::solve_nominal(supply) {
        Ok(x) => x,
        Err(e) => return Some(Err(e.to_string())),
    };
    if !keep_going() {
        return None;
    }
    let worst = match worst_case::worst_case(supply) {
        Ok(w) => w,
        Err(e) => return Some(Err(e.to_string())),
    };
    if !keep_going() {
        return None;
    }
    let (stress, no_load) = match worst_case::voltage_stress(supply) {
        Ok(x) => x,
        Err(e) => return Some(Err(e.to_string())),
    };
    if !keep_going() {
        return None;
    }
    let (checks, not_rated) = checks::checks(supply, &worst, &stress, no_load);
    let cautions = cautions(supply, stress.max_v, SAFE_TOUCH_V);
    let low = worst.low_corner().and_then(|(words, cond)| {
        circuit::solve(supply, &cond)
            .ok()
            .map(|op| (words.to_string(), op))
    });
    // Two more solves, for a valve only: cheap beside the worst case.
    let solid_state = if supply.has_valve_rectifier() {
        crate::analysis::valve::solid_state_what_if(supply, &nominal.figures).ok()
    } else {
        None
    };
    let capacitor_life =
        crate::analysis::capacitor_life::capacitor_life(supply, &nominal.figures, &worst);
    Some(Ok(Solved {
        capacitor_life,
        solid_state,
        nominal,
        hand,
        worst,
        checks,
        not_rated,
        cautions,
        stress_peak_v: stress.max_v,
        stress_no_load: no_load,
        low,
    }))
}

/// What the results panel holds while the first solve of a supply is on its way.
pub const WORKING: &str = "working it out...";

/// The supply open in the form.
#[derive(Debug, Clone)]
pub struct Open {
    pub entry: Entry,
    /// The working copy the form edits.
    pub supply: Supply,
    /// As it is on disk.
    pub saved: Supply,
    pub field: usize,
    /// A refused value: which field and why.
    pub field_error: Option<(usize, String)>,
    pub undo: Vec<Supply>,
    pub redo: Vec<Supply>,
    /// In what-if mode: the supply as it was before, and its solve, to compare against.
    pub what_if: Option<(Supply, Box<Result<Solved, String>>)>,
    pub solved: Box<Result<Solved, String>>,
    /// The results panel shows the visits instead of the figures.
    pub show_visits: bool,
    /// The results panel adds the solid-state what-if (a valve rectifier only).
    pub show_solid_state: bool,
    /// The diagnosis of the visit recorded last, shown above the visits.
    pub last_diagnosis: Option<crate::diagnose::Diagnosis>,
    /// The capacitance trend across the visits, worked out when the visits are shown.
    pub trend: Option<crate::diagnose::trend::Trend>,
    /// A solve of the supply as it is now is on its way: the results shown are older.
    pub solving: bool,
    /// A trend of the visits as they are now is on its way.
    pub trending: bool,
    /// How many lines the results panel (or the visits view) is scrolled down; the view
    /// clamps it to what there is to show.
    pub results_scroll: u16,
    /// Earlier versions of the file as this screen wrote them, each with its supply: an undo
    /// back to one writes that text again, its comments with it.
    texts: Vec<(Supply, String)>,
    /// The furthest the results panel (or the visits view) can scroll, as the last frame
    /// drew it: the view writes it, the scroll keys stop there (the view alone knows the
    /// panel's size).
    pub results_scroll_max: std::cell::Cell<u16>,
    /// Each visit's readings against their windows and a verdict, worked out with the trend
    /// on the worker (in the order of `supply.visits`).
    pub judgements: Option<Vec<super::worker::Judgement>>,
}

/// How many earlier texts of the open file are kept for undo.
const TEXTS_KEPT: usize = 32;

impl Open {
    /// The supply opened; its solve is asked for by the caller ([`App::request_solve`]).
    fn new(entry: Entry, supply: Supply) -> Open {
        let solved = Box::new(Err(WORKING.to_string()));
        Open {
            entry,
            saved: supply.clone(),
            supply,
            field: 0,
            field_error: None,
            undo: Vec::new(),
            redo: Vec::new(),
            what_if: None,
            solved,
            show_visits: false,
            show_solid_state: false,
            results_scroll: 0,
            texts: Vec::new(),
            results_scroll_max: std::cell::Cell::new(u16::MAX),
            judgements: None,
            last_diagnosis: None,
            trend: None,
            solving: true,
            trending: false,
        }
    }

    /// Edited and not saved (what-if changes do not count: they are scratch).
    pub fn dirty(&self) -> bool {
        let real = match &self.what_if {
            Some((before, _)) => before,
            None => &self.supply,
        };
        *real != self.saved
    }

    /// Takes `next` as the working copy; true if it differs (and so wants a new solve).
    fn set(&mut self, next: Supply) -> bool {
        if next == self.supply {
            return false;
        }
        self.undo.push(std::mem::replace(&mut self.supply, next));
        self.redo.clear();
        true
    }
}

/// The whole screen state.
pub struct App {
    pub library: Library,
    pub entries: Vec<Entry>,
    pub filter: String,
    /// Index into the filtered list.
    pub selected: usize,
    pub panel: Panel,
    pub mode: Mode,
    pub open: Option<Open>,
    pub status: String,
    pub quit: bool,
    pub color: bool,
    /// The sketch shows the worst low corner instead of nominal.
    pub sketch_low: bool,
    /// Esc was the last key: a `q` now quits from anywhere.
    pub escaped: bool,
    /// How long an update waits for the worker's answers before it returns: the live screen
    /// waits at most a frame and shows "working" past that; None waits for every answer, which
    /// makes a key sequence deterministic for tests, screenshots and benchmarks.
    pub patience: Option<Duration>,
    /// Ctrl-Z asked to suspend: the terminal loop hands the terminal back to the shell and
    /// takes it again on `fg`.
    pub suspend: bool,
    worker: Worker,
}

/// A key as the screen receives it; the mode reads it, and on the main screen the key table
/// ([`super::keys`]) says what it asks for.
#[derive(Debug, Clone, PartialEq)]
pub enum Msg {
    /// Ctrl-C.
    Quit,
    /// Ctrl-Z.
    Suspend,
    Up,
    Down,
    /// A page up or down: the results panel scrolls by ten lines, the list and the form move
    /// by ten.
    PageUp,
    PageDown,
    Left,
    Right,
    Home,
    End,
    NextPanel,
    PrevPanel,
    Enter,
    Escape,
    Char(char),
    /// A Ctrl+letter other than C and Z: the field editor reads some; elsewhere it does
    /// nothing.
    Ctrl(char),
    Backspace,
    /// The Delete key.
    Delete,
    /// F1.
    Help,
}

impl App {
    /// The screen over `library`, its first supply open.
    pub fn new(library: Library) -> Result<App, LibraryError> {
        let entries = library.load()?;
        let mut app = App {
            library,
            entries,
            filter: String::new(),
            selected: 0,
            panel: Panel::List,
            mode: Mode::Normal,
            open: None,
            status: "? help   Tab panels   Enter edit   q quit".into(),
            quit: false,
            color: std::env::var_os("NO_COLOR").is_none_or(|v| v.is_empty()),
            sketch_low: false,
            escaped: false,
            patience: None,
            suspend: false,
            worker: Worker::start(),
        };
        app.open_selected();
        app.settle();
        Ok(app)
    }

    /// Asks the worker to solve the open supply as it is now.
    fn request_solve(&mut self) {
        if let Some(o) = &mut self.open {
            o.solving = true;
            self.worker.submit(Job::Solve(o.supply.clone()));
        }
    }

    /// Asks the worker for the trend of the open supply's visits as they are now.
    fn request_trend(&mut self) {
        if let Some(o) = &mut self.open {
            o.trending = true;
            self.worker.submit(Job::Trend(o.supply.clone()));
        }
    }

    /// Whether answers from the worker are still to come.
    pub fn busy(&self) -> bool {
        self.worker.busy()
    }

    /// Applies the answers that have arrived, without waiting; true if any did.
    pub fn absorb(&mut self) -> bool {
        let mut any = false;
        while let Some(done) = self.worker.receive(Some(Duration::ZERO)) {
            self.apply(done);
            any = true;
        }
        any
    }

    /// Waits for the worker as long as [`App::patience`] allows, applying what comes.
    pub fn settle(&mut self) {
        let deadline = self.patience.map(|p| Instant::now() + p);
        while self.worker.busy() {
            let wait = deadline.map(|d| d.saturating_duration_since(Instant::now()));
            match self.worker.receive(wait) {
                Some(done) => self.apply(done),
                None => break,
            }
        }
    }

    /// Waits for every outstanding answer, whatever the patience (for tests and tools).
    pub fn wait_idle(&mut self) {
        while let Some(done) = self.worker.receive(None) {
            self.apply(done);
        }
    }

    /// Takes one answer where it still applies: to the working copy, or to the what-if's
    /// saved side; an answer for a supply no longer open or since edited is dropped.
    fn apply(&mut self, done: Done) {
        let Some(o) = &mut self.open else { return };
        match done {
            Done::Solved(supply, result) => {
                if let Some((before, solved)) = &mut o.what_if
                    && *before == supply
                {
                    *solved = result.clone();
                }
                if o.supply == supply {
                    o.solved = result;
                    o.solving = false;
                }
            }
            Done::Trend(supply, trend, judgements) => {
                if o.supply == supply {
                    o.trend = Some(trend);
                    o.judgements = Some(judgements);
                    o.trending = false;
                }
            }
            Done::Dropped => {}
        }
    }

    /// The entries the filter lets through, as indexes into `entries`.
    pub fn visible(&self) -> Vec<usize> {
        let f = self.filter.to_lowercase();
        (0..self.entries.len())
            .filter(|&i| f.is_empty() || self.entries[i].name().to_lowercase().contains(&f))
            .collect()
    }

    fn open_selected(&mut self) {
        let vis = self.visible();
        let Some(&i) = vis.get(self.selected) else {
            self.open = None;
            return;
        };
        let entry = self.entries[i].clone();
        self.open = match &entry.state {
            EntryState::Ok { supply, .. } => {
                let s = (**supply).clone();
                Some(Open::new(entry, s))
            }
            EntryState::Unreadable { .. } => None,
        };
        self.request_solve();
    }

    /// Saves the open supply if it was edited; true if nothing is left unsaved.
    pub fn save_open(&mut self) -> bool {
        let Some(open) = &mut self.open else {
            return true;
        };
        if !open.dirty() {
            return true;
        }
        let to_save = match &open.what_if {
            Some((before, _)) => before.clone(),
            None => open.supply.clone(),
        };
        // Back to a version this screen wrote (an undo): that text, comments and all.
        let earlier = open
            .texts
            .iter()
            .rev()
            .find(|(s, _)| *s == to_save)
            .cloned();
        let result = match &earlier {
            Some((base, text)) => self
                .library
                .save_restoring(&open.entry, &to_save, base, text),
            None => self.library.save(&open.entry, &to_save),
        };
        match result {
            Ok(written) => {
                if let EntryState::Ok { text, .. } = &open.entry.state {
                    open.texts.push((open.saved.clone(), text.clone()));
                    if open.texts.len() > TEXTS_KEPT {
                        open.texts.remove(0);
                    }
                }
                // The file as written, not as re-read: another program may change it the
                // moment after, and that change must meet the next save's check.
                self.status = format!("saved {}", written.file.display());
                open.entry = written;
                open.saved = to_save;
                self.refresh_entries();
                true
            }
            Err(LibraryError::ChangedOnDisk(_)) => {
                self.mode = Mode::Conflict;
                false
            }
            Err(e) => {
                self.status = format!("not saved: {e}");
                false
            }
        }
    }

    fn refresh_entries(&mut self) {
        if let Ok(e) = self.library.load() {
            self.entries = e;
        }
        // A rename re-sorts the list: the highlight goes with the open supply.
        if !self.follow_open() {
            let vis = self.visible();
            if self.selected >= vis.len() {
                self.selected = vis.len().saturating_sub(1);
            }
        }
    }

    fn select(&mut self, index: usize) {
        if index == self.selected {
            return;
        }
        // Leaving a supply saves it; a refused save keeps it open for the technician to decide.
        if !self.save_open() {
            return;
        }
        self.selected = index;
        self.open_selected();
    }

    fn select_file(&mut self, path: &std::path::Path) {
        self.refresh_entries();
        let vis = self.visible();
        if let Some(pos) = vis.iter().position(|&i| self.entries[i].file == path) {
            self.selected = pos;
        }
        self.open_selected();
    }

    /// Applies one message (volts and the rest as the form's fields take them).
    pub fn update(&mut self, msg: Msg) {
        let was_escape = msg == Msg::Escape;
        match self.mode.clone() {
            Mode::Normal => self.normal(msg),
            Mode::Editing { editor } => self.editing(msg, editor),
            Mode::Picker { choice } => self.picking(msg, choice),
            Mode::Filter => self.filtering(msg),
            Mode::Help => {
                if matches!(
                    msg,
                    Msg::Escape | Msg::Enter | Msg::Help | Msg::Char('q' | '?')
                ) {
                    self.mode = Mode::Normal;
                }
            }
            Mode::Confirm(what) => self.confirm(what, msg),
            Mode::NewSupply { topology } => self.new_supply(msg, topology),
            Mode::Visit(form) => self.visit_form(msg, form),
            Mode::Trash { items, selected } => self.trash(msg, items, selected),
            Mode::Conflict => self.conflict(msg),
        }
        self.escaped = was_escape;
        self.settle();
    }

    fn quit_now(&mut self) {
        if let Some(open) = &mut self.open
            && open.what_if.is_some()
        {
            // Scratch values are never saved by quitting; the real edits underneath are.
            let (before, solved) = open.what_if.take().expect("what-if");
            open.supply = before;
            open.solving = is_working(&solved);
            open.solved = solved;
        }
        if self.save_open() {
            self.quit = true;
        }
    }

    fn normal(&mut self, msg: Msg) {
        // A digit typed on a number field starts typing its new value at once.
        if let (Msg::Char(c @ ('0'..='9' | '.')), Panel::Form, Some(o)) =
            (&msg, self.panel, &self.open)
            && matches!(FIELDS[o.field].edit, super::fields::Edit::Number(_))
        {
            let mut editor = LineEditor::new(&FIELDS[o.field].show(&o.supply));
            editor.key(LineKey::Char(*c));
            self.mode = Mode::Editing { editor };
            return;
        }
        let Some(act) = action(&msg) else { return };
        match act {
            Action::Quit => self.quit_now(),
            Action::Suspend => self.suspend = true,
            Action::Help => self.mode = Mode::Help,
            Action::NextPanel => {
                self.panel = match self.panel {
                    Panel::List => Panel::Form,
                    Panel::Form => Panel::Results,
                    Panel::Results => Panel::List,
                }
            }
            Action::PrevPanel => {
                self.panel = match self.panel {
                    Panel::List => Panel::Results,
                    Panel::Form => Panel::List,
                    Panel::Results => Panel::Form,
                }
            }
            Action::Escape => {
                if let Some(o) = &mut self.open {
                    o.field_error = None;
                }
            }
            Action::Up => self.move_by(-1),
            Action::Down => self.move_by(1),
            Action::PageUp => self.move_by(-10),
            Action::PageDown => self.move_by(10),
            Action::ChangeChoice(forward) => self.cycle_choice(forward),
            Action::Enter => match self.panel {
                Panel::List => self.panel = Panel::Form,
                Panel::Form => self.open_field(),
                Panel::Results => {}
            },
            Action::Filter => {
                self.panel = Panel::List;
                self.mode = Mode::Filter;
            }
            Action::Save => self.save_now(),
            Action::Undo => self.undo(true),
            Action::Redo => self.undo(false),
            Action::WhatIf => self.what_if(),
            Action::Sketch => self.sketch_low = !self.sketch_low,
            Action::New => self.mode = Mode::NewSupply { topology: 2 },
            Action::Copy => self.duplicate(),
            Action::Delete => {
                if let Some(e) = self.highlighted() {
                    self.mode = Mode::Confirm(Confirm::Delete {
                        file: e.file.clone(),
                        name: e.name(),
                    });
                }
            }
            Action::Trash => {
                let items = self.library.trashed();
                self.status = if items.is_empty() {
                    "the trash is empty".into()
                } else {
                    "the trash: Enter restores the highlighted supply, Esc closes".into()
                };
                self.mode = Mode::Trash { items, selected: 0 };
            }
            Action::Visits => {
                if let Some(o) = &mut self.open {
                    o.show_visits = !o.show_visits;
                    o.results_scroll = 0;
                    let want = o.show_visits;
                    self.panel = Panel::Results;
                    if want {
                        self.request_trend();
                    }
                }
            }
            Action::SolidState => {
                if let Some(o) = &mut self.open {
                    if o.supply.has_valve_rectifier() {
                        o.show_solid_state = !o.show_solid_state;
                        o.show_visits = false;
                        self.panel = Panel::Results;
                        self.status = if o.show_solid_state {
                            "solid-state what-if: silicon in the valve's place, under the \
                             figures (S hides it)"
                                .into()
                        } else {
                            "solid-state what-if hidden".into()
                        };
                    } else {
                        self.status = "S is for a valve rectifier: this supply's diodes are \
                                       already solid-state"
                            .into();
                    }
                }
            }
            Action::Calibrate => {
                if self.open.as_ref().is_some_and(|o| o.show_visits) {
                    self.calibrate_on_newest();
                } else {
                    self.status = "b calibrates in the visits view: v shows it".into();
                }
            }
            Action::Record => {
                if self.open.as_ref().is_some_and(|o| o.show_visits) {
                    self.record_newest();
                } else {
                    self.status =
                        "P writes the service record in the visits view: v shows it".into();
                }
            }
            Action::AddVisit => {
                if self.open.is_some() {
                    self.mode = Mode::Visit(VisitForm::new(crate::clock::today()));
                }
            }
            Action::Reload => {
                self.refresh_entries();
                self.open_selected();
                self.status = "reloaded from disk".into();
            }
        }
    }

    /// The entry the list highlights.
    pub fn highlighted(&self) -> Option<&Entry> {
        self.visible().get(self.selected).map(|&i| &self.entries[i])
    }

    /// Enter on a form field: a choice opens its list, any other field its line editor with
    /// the old value selected.
    fn open_field(&mut self) {
        let Some(o) = &self.open else { return };
        let f = &FIELDS[o.field];
        if f.is_choice() {
            let now = f.show(&o.supply);
            let choice = f.words().iter().position(|w| *w == now).unwrap_or(0);
            self.mode = Mode::Picker { choice };
            return;
        }
        let text = f.show(&o.supply);
        let text = if text == "-" || text.ends_with("(nameplate)") {
            String::new()
        } else {
            text
        };
        self.mode = Mode::Editing {
            editor: LineEditor::new(&text),
        };
    }

    fn save_now(&mut self) {
        if self.save_open() {
            self.status = match &self.open {
                Some(o) => format!("saved {}", o.entry.file.display()),
                None => "nothing to save".into(),
            };
        }
    }

    fn move_by(&mut self, delta: i64) {
        match self.panel {
            Panel::List => {
                let n = self.visible().len() as i64;
                if n > 0 {
                    let next = (self.selected as i64 + delta).clamp(0, n - 1) as usize;
                    self.select(next);
                }
            }
            Panel::Form => {
                if let Some(o) = &mut self.open {
                    o.field = step_field(&o.supply, o.field, delta);
                }
            }
            Panel::Results => {
                if let Some(o) = &mut self.open {
                    let max = o.results_scroll_max.get() as i64;
                    let from = (o.results_scroll as i64).min(max);
                    o.results_scroll = (from + delta).clamp(0, max) as u16;
                }
            }
        }
    }

    fn cycle_choice(&mut self, forward: bool) {
        if self.panel != Panel::Form {
            return;
        }
        let Some(o) = &self.open else { return };
        let f = &FIELDS[o.field];
        if let Some(word) = f.cycle(&o.supply, forward) {
            self.apply_field(word);
        }
    }

    /// Applies `text` to the field under the cursor: refused with its reason beside the field,
    /// asked about first when it drops values, otherwise taken and saved.
    fn apply_field(&mut self, text: &str) -> bool {
        let Some(o) = &mut self.open else {
            return false;
        };
        let field = o.field;
        let f = &FIELDS[field];
        match f.apply(&o.supply, text) {
            Err(e) => {
                o.field_error = Some((field, e));
                false
            }
            Ok(Change { supply, drops }) if !drops.is_empty() => {
                o.field_error = None;
                self.mode = Mode::Confirm(Confirm::Drop {
                    change: Box::new(supply),
                    what: format!("{}: {} {}", f.group, f.label.to_lowercase(), text.trim()),
                    drops,
                });
                true
            }
            Ok(Change { supply, .. }) => {
                o.field_error = None;
                self.take_change(supply, &format!("{} set to {}", f.label, text.trim()));
                true
            }
        }
    }

    /// Takes `next` as the open supply (undoable), solves and saves it, and says `what`.
    fn take_change(&mut self, next: Supply, what: &str) {
        let Some(o) = &mut self.open else { return };
        let scratch = o.what_if.is_some();
        let changed = o.set(next);
        // A row the change hid (the ratio, once the nameplate is chosen) gives the cursor to
        // the nearest row that applies.
        o.field = step_field(&o.supply, o.field, 0);
        if changed {
            self.request_solve();
        }
        self.autosave();
        if self.mode == Mode::Normal {
            self.status = if scratch {
                format!("{what} (what-if: not saved)")
            } else {
                format!("{what} (saved)")
            };
        }
    }

    /// Edits are saved as soon as they are applied, through the library's safe save, so a
    /// closed terminal or a flat battery loses nothing; what-if values are scratch and wait.
    fn autosave(&mut self) {
        let scratch = self.open.as_ref().is_some_and(|o| o.what_if.is_some());
        if !scratch {
            self.save_open();
        }
    }

    fn editing(&mut self, msg: Msg, mut editor: LineEditor) {
        let key = match msg {
            // Quitting while typing keeps what was typed, if it is a valid value.
            Msg::Quit => {
                self.mode = Mode::Normal;
                self.apply_field(&editor.text);
                self.mode = Mode::Normal;
                self.quit_now();
                return;
            }
            Msg::Escape => {
                self.mode = Mode::Normal;
                if let Some(o) = &mut self.open {
                    o.field_error = None;
                }
                return;
            }
            Msg::Enter => {
                self.mode = Mode::Normal;
                let taken = self.apply_field(&editor.text);
                if !taken && self.mode == Mode::Normal {
                    // Refused: the old value stays, the reason shows beside the field, and
                    // the typed text stays to be corrected.
                    self.mode = Mode::Editing { editor };
                } else if taken
                    && self.mode == Mode::Normal
                    && let Some(o) = &mut self.open
                {
                    // On to the next row, as a form filled in from top to bottom goes.
                    o.field = step_field(&o.supply, o.field, 1);
                }
                return;
            }
            Msg::Char(c) => LineKey::Char(c),
            Msg::Left => LineKey::Left,
            Msg::Right => LineKey::Right,
            Msg::Home | Msg::Ctrl('a') => LineKey::Home,
            Msg::End | Msg::Ctrl('e') => LineKey::End,
            Msg::Backspace => LineKey::Backspace,
            Msg::Delete => LineKey::Delete,
            Msg::Ctrl('u') => LineKey::Clear,
            Msg::Ctrl('w') => LineKey::DeleteWord,
            _ => {
                self.mode = Mode::Editing { editor };
                return;
            }
        };
        editor.key(key);
        self.mode = Mode::Editing { editor };
    }

    fn picking(&mut self, msg: Msg, choice: usize) {
        let Some(o) = &self.open else {
            self.mode = Mode::Normal;
            return;
        };
        let words = FIELDS[o.field].words();
        let n = words.len().max(1);
        match msg {
            Msg::Up | Msg::Char('k') => {
                self.mode = Mode::Picker {
                    choice: (choice + n - 1) % n,
                }
            }
            Msg::Down | Msg::Char('j') => {
                self.mode = Mode::Picker {
                    choice: (choice + 1) % n,
                }
            }
            Msg::Escape => self.mode = Mode::Normal,
            Msg::Enter => {
                self.mode = Mode::Normal;
                if let Some(w) = words.get(choice) {
                    self.apply_field(w);
                }
            }
            Msg::Quit => {
                self.mode = Mode::Normal;
                self.quit_now();
            }
            _ => {}
        }
    }

    fn filtering(&mut self, msg: Msg) {
        match msg {
            Msg::Char(c) => self.filter.push(c),
            Msg::Backspace => {
                self.filter.pop();
            }
            Msg::Enter | Msg::Escape | Msg::Down | Msg::Up => {
                self.mode = Mode::Normal;
                if msg == Msg::Escape {
                    self.filter.clear();
                }
            }
            _ => {}
        }
        if !self.save_open() {
            return;
        }
        // The open supply stays open while the filter lets it through, and the highlight goes
        // with it; otherwise the first supply that passes opens.
        if !self.follow_open() {
            self.selected = 0;
            self.open_selected();
        }
    }

    /// Moves the highlight to the open supply; false if the filter hides it.
    fn follow_open(&mut self) -> bool {
        let Some(file) = self.open.as_ref().map(|o| o.entry.file.clone()) else {
            return false;
        };
        match self
            .visible()
            .iter()
            .position(|&i| self.entries[i].file == file)
        {
            Some(pos) => {
                self.selected = pos;
                true
            }
            None => false,
        }
    }

    fn undo(&mut self, back: bool) {
        let Some(o) = &mut self.open else { return };
        let (from, to) = if back {
            (&mut o.undo, &mut o.redo)
        } else {
            (&mut o.redo, &mut o.undo)
        };
        if let Some(prev) = from.pop() {
            to.push(std::mem::replace(&mut o.supply, prev));
            o.field = step_field(&o.supply, o.field, 0);
            self.request_solve();
            self.autosave();
            self.status = if back {
                "undone (saved)".into()
            } else {
                "redone (saved)".into()
            };
        }
    }

    fn what_if(&mut self) {
        let Some(o) = &mut self.open else { return };
        if o.what_if.is_some() {
            self.mode = Mode::Confirm(Confirm::EndWhatIf);
        } else {
            o.what_if = Some((o.supply.clone(), o.solved.clone()));
            self.status = "WHAT-IF: changes are scratch; x to keep or discard".into();
        }
    }

    fn confirm(&mut self, what: Confirm, msg: Msg) {
        let yes = matches!(msg, Msg::Char('y') | Msg::Char('k') | Msg::Enter);
        let no = matches!(msg, Msg::Char('n') | Msg::Char('d') | Msg::Escape);
        if !(yes || no) {
            return;
        }
        self.mode = Mode::Normal;
        match what {
            Confirm::Delete { file, name } if yes => self.delete(&file, &name),
            Confirm::Delete { .. } => {}
            Confirm::EndWhatIf => {
                let Some(o) = &mut self.open else { return };
                let Some((before, solved)) = o.what_if.take() else {
                    return;
                };
                if yes {
                    // Keep: the scratch values become edits, saved like any other.
                    o.undo.push(before);
                    self.autosave();
                    self.status = "what-if kept as edits (saved)".into();
                } else {
                    o.supply = before;
                    o.solving = is_working(&solved);
                    o.solved = solved;
                    self.status = "what-if discarded".into();
                }
            }
            Confirm::Drop { change, what, .. } if yes => self.take_change(*change, &what),
            Confirm::Drop { .. } => self.status = "nothing changed".into(),
            // Leave the form: yes drops what was typed; no goes back to it.
            Confirm::DropVisit(_) if yes => self.status = "the visit was not recorded".into(),
            Confirm::DropVisit(form) => self.mode = Mode::Visit(form),
        }
    }

    fn delete(&mut self, file: &std::path::Path, name: &str) {
        let was_open = self.open.as_ref().is_some_and(|o| o.entry.file == file);
        if was_open && !self.save_open() {
            return;
        }
        self.status = match self.library.trash(file) {
            Ok(to) => format!(
                "{name} moved to {} (T lists the trash and restores it)",
                to.display()
            ),
            Err(e) => format!("{name} not deleted: {e}"),
        };
        if was_open {
            self.open = None;
        }
        self.refresh_entries();
        if self.open.is_none() {
            self.open_selected();
        } else {
            self.follow_open();
        }
    }

    fn trash(&mut self, msg: Msg, items: Vec<crate::library::Trashed>, selected: usize) {
        let n = items.len();
        match msg {
            Msg::Up | Msg::Char('k') if n > 0 => {
                self.mode = Mode::Trash {
                    items,
                    selected: (selected + n - 1) % n,
                }
            }
            Msg::Down | Msg::Char('j') if n > 0 => {
                self.mode = Mode::Trash {
                    items,
                    selected: (selected + 1) % n,
                }
            }
            Msg::Enter if n > 0 => {
                self.mode = Mode::Normal;
                let item = &items[selected];
                match self.library.restore(&item.file) {
                    Ok(path) => {
                        self.status = format!("{} restored as {}", item.name, path.display());
                        if self.save_open() {
                            self.select_file(&path);
                        }
                    }
                    Err(e) => self.status = format!("{} not restored: {e}", item.name),
                }
            }
            Msg::Escape | Msg::Char('q') | Msg::Char('T') | Msg::Enter => self.mode = Mode::Normal,
            Msg::Quit => {
                self.mode = Mode::Normal;
                self.quit_now();
            }
            _ => self.mode = Mode::Trash { items, selected },
        }
    }

    fn duplicate(&mut self) {
        let Some(e) = self.highlighted() else { return };
        let Some(source) = e.supply() else {
            self.status = format!("{} is unreadable: nothing to copy", e.name());
            return;
        };
        // The highlighted supply as the form has it when it is the open one (edits included).
        let mut copy = match &self.open {
            Some(o) if o.entry.file == e.file => o.supply.clone(),
            _ => source.clone(),
        };
        let from = copy.name.clone();
        copy.name = format!("{} (copy)", copy.name);
        copy.visits.clear();
        copy.calibration = None;
        if !self.save_open() {
            return;
        }
        match self.library.add(&copy, None) {
            Ok(path) => {
                self.status = format!("{from} copied as {}", path.display());
                self.select_file(&path);
            }
            Err(e) => self.status = format!("{from} not copied: {e}"),
        }
    }

    fn new_supply(&mut self, msg: Msg, topology: usize) {
        let n = Topology::ALL.len();
        match msg {
            Msg::Up | Msg::Left | Msg::Char('k') => {
                self.mode = Mode::NewSupply {
                    topology: (topology + n - 1) % n,
                }
            }
            Msg::Down | Msg::Right | Msg::Char('j') => {
                self.mode = Mode::NewSupply {
                    topology: (topology + 1) % n,
                }
            }
            Msg::Escape => self.mode = Mode::Normal,
            Msg::Enter => {
                self.mode = Mode::Normal;
                let t = Topology::ALL[topology];
                let s = template(t);
                if !self.save_open() {
                    return;
                }
                match self.library.add(&s, None) {
                    Ok(path) => {
                        self.status = format!("new {} supply in {}", t.key(), path.display());
                        self.select_file(&path);
                        self.panel = Panel::Form;
                    }
                    Err(e) => self.status = format!("not created: {e}"),
                }
            }
            _ => {}
        }
    }

    fn visit_form(&mut self, msg: Msg, mut form: VisitForm) {
        match msg {
            Msg::Escape => {
                // Typed readings are a record in the making: leaving asks first.
                self.mode = if form.touched() {
                    Mode::Confirm(Confirm::DropVisit(form))
                } else {
                    Mode::Normal
                };
                return;
            }
            Msg::Up => form.field = form.field.saturating_sub(1),
            Msg::Down | Msg::NextPanel => form.field = (form.field + 1).min(VISIT_FIELDS.len() - 1),
            Msg::PrevPanel => form.field = form.field.saturating_sub(1),
            Msg::Char(c) => form.values[form.field].push(c),
            Msg::Backspace => {
                form.values[form.field].pop();
            }
            Msg::Ctrl('u') => form.values[form.field].clear(),
            Msg::Enter => match self.record_visit(&form) {
                Ok(()) => {
                    self.mode = Mode::Normal;
                    return;
                }
                Err(e) => form.error = Some(e),
            },
            _ => {}
        }
        self.mode = Mode::Visit(form);
    }

    /// Adds the visit in `form` to the open supply and saves it at once: a visit is a record.
    fn record_visit(&mut self, form: &VisitForm) -> Result<(), String> {
        let mut table = toml::Table::new();
        for ((label, key), text) in VISIT_FIELDS.iter().zip(&form.values) {
            let text = text.trim();
            if text.is_empty() {
                continue;
            }
            let value = match *key {
                "date" => toml::Value::Datetime(
                    text.parse()
                        .map_err(|_| format!("{label}: {text:?} is not a date like 2026-11-30"))?,
                ),
                "notes" | "technician" => toml::Value::String(text.to_string()),
                "replaced" => toml::Value::Array(
                    text.split(',')
                        .map(str::trim)
                        .filter(|p| !p.is_empty())
                        .map(|p| toml::Value::String(p.to_string()))
                        .collect(),
                ),
                _ => toml::Value::Float(
                    crate::units::parse_si(text).map_err(|e| format!("{label}: {e}"))?,
                ),
            };
            table.insert(key.to_string(), value);
        }
        let mut visit: Visit = table
            .try_into()
            .map_err(|e: toml::de::Error| e.message().to_string())?;
        let Some(o) = &mut self.open else {
            return Err("no supply open".into());
        };
        // The verdict on these readings goes with the visit; readings that cannot be true
        // are refused with the reason, so they can be corrected before saving.
        let readings = visit.readings;
        // Readings the unit cannot show (a typed "2k" for the mains) are refused before they
        // become a record, whether or not there is a rail reading to diagnose.
        readings
            .check_against(&o.saved)
            .map_err(|e| e.to_string())?;
        o.last_diagnosis = None;
        if !readings.present().iter().all(|(k, _)| *k == "mains_vrms") {
            let d = crate::diagnose::diagnose(&o.saved, &readings).map_err(|e| e.to_string())?;
            let mut with = crate::diagnose::visit_of(&readings, &d, &visit.date_text());
            with.notes = std::mem::take(&mut visit.notes);
            with.technician = std::mem::take(&mut visit.technician);
            with.replaced = std::mem::take(&mut visit.replaced);
            visit = with;
            o.last_diagnosis = Some(d);
        }
        let mut next = match &o.what_if {
            Some((before, _)) => before.clone(),
            None => o.supply.clone(),
        };
        next.visits.push(visit);
        next.validate().map_err(|e| e.to_string())?;
        let mut changed = false;
        if o.what_if.is_none() {
            changed = o.set(next);
        } else if let Some((before, _)) = &mut o.what_if {
            *before = next;
        }
        o.show_visits = true;
        if changed {
            self.request_solve();
        }
        self.request_trend();
        if self.save_open() {
            let capacitor = self
                .open
                .as_ref()
                .and_then(|o| o.supply.visits.last())
                .is_some_and(|v| v.replaced_capacitor());
            self.status = if capacitor {
                "visit recorded and saved; a filter capacitor was replaced: its trend starts \
                 again from the next visit"
                    .into()
            } else {
                "visit recorded and saved".into()
            };
        }
        Ok(())
    }

    /// Writes the service record of the open supply's newest visit into the library's
    /// `records` folder (never over an earlier one) and says where. Solved here, as the
    /// calibration is: a report's worst case takes a moment, and it is asked for once.
    fn record_newest(&mut self) {
        let Some(o) = &self.open else { return };
        if o.what_if.is_some() {
            self.status = "not in what-if: a service record is of the real unit".into();
            return;
        }
        let Some(visit) = o.supply.visits.iter().max_by_key(|v| v.days()) else {
            self.status = "no visits to record: a records one".into();
            return;
        };
        let file = o.entry.file.clone();
        let html = match crate::record::of_visit(&o.supply, visit, &file.display().to_string()) {
            Ok(html) => html,
            Err(e) => {
                self.status = format!("no record written: {e}");
                return;
            }
        };
        let date = visit.date_text();
        self.status = match self.library.write_record(&file, &date, &html) {
            Ok(path) => format!("service record of {date} written to {}", path.display()),
            Err(e) => format!("no record written: {e}"),
        };
    }

    /// Calibrates the open supply on its newest visit, marks that visit as the baseline and
    /// saves; `u` takes it back. Worked out here rather than on the worker: it is asked for
    /// once, and the visit form's diagnosis runs here too.
    fn calibrate_on_newest(&mut self) {
        let Some(o) = &mut self.open else { return };
        if o.what_if.is_some() {
            self.status = "not in what-if: a calibration is a record of the real unit".into();
            return;
        }
        let Some(i) = (0..o.supply.visits.len()).max_by_key(|&i| o.supply.visits[i].days()) else {
            self.status = "no visits to calibrate on: a records one (mains and DC at least)".into();
            return;
        };
        let visit = o.supply.visits[i].clone();
        match crate::diagnose::calibrate::calibrate(&o.supply, &visit.readings, visit.date) {
            Err(e) => self.status = format!("not calibrated: {e}"),
            Ok(fit) => {
                let mut next = o.supply.clone();
                for v in &mut next.visits {
                    v.baseline = false;
                }
                next.visits[i].baseline = true;
                next.calibration = Some(fit.calibration.clone());
                let dc = fit
                    .before
                    .iter()
                    .zip(&fit.after)
                    .find(|(b, _)| b.reading == "dc_v")
                    .map(|(b, a)| {
                        format!(
                            "; DC window {:.2}..{:.2} -> {:.2}..{:.2} V",
                            b.min, b.max, a.min, a.max
                        )
                    })
                    .unwrap_or_default();
                if o.set(next) {
                    self.request_solve();
                    self.request_trend();
                }
                if self.save_open() {
                    self.status = format!(
                        "calibrated on the visit of {} (baseline){dc}; u undoes",
                        visit.date_text()
                    );
                }
            }
        }
    }

    fn conflict(&mut self, msg: Msg) {
        match msg {
            // Reload: take the file as it is now on disk; the edits here are dropped.
            Msg::Char('r') => {
                self.mode = Mode::Normal;
                self.refresh_entries();
                self.open_selected();
                self.status = "reloaded the file from disk; your edits were dropped".into();
            }
            // Keep mine: written as a new supply beside theirs, so nothing is lost.
            Msg::Char('k') => {
                self.mode = Mode::Normal;
                let Some(o) = &self.open else { return };
                let mut mine = o.supply.clone();
                mine.name = format!("{} (mine)", mine.name);
                match self.library.add(&mine, None) {
                    Ok(path) => {
                        self.status = format!("your version saved as {}", path.display());
                        self.select_file(&path);
                    }
                    Err(e) => self.status = format!("not saved: {e}"),
                }
            }
            Msg::Escape => self.mode = Mode::Normal,
            _ => {}
        }
    }
}

/// Whether `solved` is the placeholder of a solve still on its way.
fn is_working(solved: &Result<Solved, String>) -> bool {
    matches!(solved, Err(e) if e == WORKING)
}

/// A starting point for a new supply of `topology`: a 230 V, 50 Hz unit with round values (a
/// 400 V three-phase one for a three-phase topology).
pub fn template(topology: Topology) -> Supply {
    let mains = if topology.phases() == 3 {
        "phases = 3\nvrms = 400.0"
    } else {
        "vrms = 230.0"
    };
    let text = format!(
        "format = 1\nname = \"New {} supply\"\nnotes = \"\"\n[mains]\n{mains}\nhz = 50.0\n\
         [transformer]\nratio = 10.0\nsecondary_ohms = 1.0\n[rectifier]\ntopology = \"{}\"\n\
         [filter]\nkind = \"capacitor\"\nuf = 2200.0\nesr_ohms = 0.05\n[load]\namps = 0.2\n",
        topology.key(),
        topology.key()
    );
    let mut s = Supply::from_toml_str(&text).expect("the template is valid");
    // Round numbers to start from, not facts of the unit: marked until the technician sets them.
    s.unconfirmed = [
        "name",
        "mains.vrms",
        "mains.hz",
        "transformer.ratio",
        "transformer.secondary_ohms",
        "filter.uf",
        "filter.esr_ohms",
        "load.amps",
    ]
    .map(String::from)
    .to_vec();
    s
}

/// The nearest row to `from` that applies to `s`, `delta` rows on (0: `from` itself if it
/// applies, else the next one that does, else the previous).
fn step_field(s: &Supply, from: usize, delta: i64) -> usize {
    let applies = |i: usize| FIELDS[i].applies(s);
    let n = FIELDS.len() as i64;
    let mut at = from.min(FIELDS.len() - 1);
    let step = delta.signum();
    let mut left = delta.abs();
    while left > 0 {
        let mut next = at as i64 + step;
        while (0..n).contains(&next) && !applies(next as usize) {
            next += step;
        }
        if !(0..n).contains(&next) {
            break;
        }
        at = next as usize;
        left -= 1;
    }
    if applies(at) {
        return at;
    }
    (at..FIELDS.len())
        .find(|&i| applies(i))
        .or_else(|| (0..at).rev().find(|&i| applies(i)))
        .unwrap_or(0)
}
