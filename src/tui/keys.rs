//! The one table of keys: what each key does on the main screen, which the update looks up and
//! the help overlay lists, so the two cannot disagree. A Ctrl+letter that is not in the table
//! does nothing (it is not taken for its letter). Dialogs and the field editor read their few
//! keys themselves; their keys are listed under [`TYPING`].

use super::app::Msg;

/// What a key asks of the main screen.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Action {
    Up,
    Down,
    PageUp,
    PageDown,
    ChangeChoice(bool),
    NextPanel,
    PrevPanel,
    Enter,
    Escape,
    Filter,
    Save,
    Undo,
    Redo,
    WhatIf,
    SolidState,
    Sketch,
    New,
    Copy,
    Delete,
    Trash,
    Visits,
    AddVisit,
    Calibrate,
    Record,
    Reload,
    Help,
    Quit,
    Suspend,
}

/// One line of the table: the keys as the help shows them, the messages they arrive as, the
/// action, and what it does.
pub struct Binding {
    pub keys: &'static str,
    pub msgs: &'static [Msg],
    pub action: Action,
    pub help: &'static str,
}

const fn bind(
    keys: &'static str,
    msgs: &'static [Msg],
    action: Action,
    help: &'static str,
) -> Binding {
    Binding {
        keys,
        msgs,
        action,
        help,
    }
}

/// Every key of the main screen.
pub const BINDINGS: &[Binding] = &[
    bind(
        "Up/Down, k/j",
        &[Msg::Up, Msg::Char('k')],
        Action::Up,
        "move in the list or the form; scroll the results",
    ),
    bind("", &[Msg::Down, Msg::Char('j')], Action::Down, ""),
    bind(
        "PgUp/PgDn",
        &[Msg::PageUp],
        Action::PageUp,
        "a page up / down (the results panel scrolls)",
    ),
    bind("", &[Msg::PageDown], Action::PageDown, ""),
    bind(
        "Left/Right, h/l",
        &[Msg::Left, Msg::Char('h')],
        Action::ChangeChoice(false),
        "change a choice field (topology, diode, filter, ...)",
    ),
    bind(
        "",
        &[Msg::Right, Msg::Char('l')],
        Action::ChangeChoice(true),
        "",
    ),
    bind(
        "Tab / Shift-Tab",
        &[Msg::NextPanel],
        Action::NextPanel,
        "next / previous panel",
    ),
    bind("", &[Msg::PrevPanel], Action::PrevPanel, ""),
    bind(
        "Enter",
        &[Msg::Enter],
        Action::Enter,
        "edit the field (a choice opens a list); open the highlighted supply",
    ),
    bind(
        "Esc",
        &[Msg::Escape],
        Action::Escape,
        "cancel, close; then q always quits",
    ),
    bind(
        "/",
        &[Msg::Char('/')],
        Action::Filter,
        "filter the list by typing; Esc clears",
    ),
    bind(
        "s",
        &[Msg::Char('s')],
        Action::Save,
        "save now (applied edits are saved at once anyway)",
    ),
    bind("u / U", &[Msg::Char('u')], Action::Undo, "undo / redo"),
    bind("", &[Msg::Char('U')], Action::Redo, ""),
    bind(
        "x",
        &[Msg::Char('x')],
        Action::WhatIf,
        "what-if: scratch changes; x again to keep or discard",
    ),
    bind(
        "S",
        &[Msg::Char('S')],
        Action::SolidState,
        "valve rectifier: what silicon in its place does",
    ),
    bind(
        "w",
        &[Msg::Char('w')],
        Action::Sketch,
        "sketch: nominal or the worst low corner",
    ),
    bind(
        "n",
        &[Msg::Char('n')],
        Action::New,
        "new supply from a topology template",
    ),
    bind(
        "c",
        &[Msg::Char('c')],
        Action::Copy,
        "copy the highlighted supply",
    ),
    bind(
        "D",
        &[Msg::Char('D'), Msg::Delete],
        Action::Delete,
        "delete the highlighted supply (to .trash)",
    ),
    bind(
        "T",
        &[Msg::Char('T')],
        Action::Trash,
        "the trash: restore a deleted supply",
    ),
    bind(
        "v",
        &[Msg::Char('v')],
        Action::Visits,
        "the supply's visits, or back to the results",
    ),
    bind(
        "a",
        &[Msg::Char('a')],
        Action::AddVisit,
        "record a visit (readings form; Enter saves)",
    ),
    bind(
        "b",
        &[Msg::Char('b')],
        Action::Calibrate,
        "visits: calibrate on the newest visit (known good)",
    ),
    bind(
        "P",
        &[Msg::Char('P')],
        Action::Record,
        "visits: print record of the newest visit (HTML file)",
    ),
    bind(
        "R",
        &[Msg::Char('R')],
        Action::Reload,
        "reload the library from disk",
    ),
    bind(
        "?, F1",
        &[Msg::Char('?'), Msg::Help],
        Action::Help,
        "this help",
    ),
    bind(
        "q, Ctrl-C",
        &[Msg::Char('q'), Msg::Quit],
        Action::Quit,
        "quit (edits are saved; what-if scratch is dropped)",
    ),
    bind(
        "Ctrl-Z",
        &[Msg::Suspend],
        Action::Suspend,
        "suspend to the shell; fg comes back",
    ),
];

/// The keys of the field editor and the dialogs, for the help overlay.
pub const TYPING: &[(&str, &str)] = &[
    (
        "typing a value",
        "the first key replaces it; Left/Right, Home/End (Ctrl-A/E) move",
    ),
    (
        "",
        "Ctrl-U clears, Ctrl-W deletes a word; Enter applies, Esc cancels",
    ),
];

/// The action a message asks for on the main screen, if any.
pub fn action(msg: &Msg) -> Option<Action> {
    BINDINGS
        .iter()
        .find(|b| b.msgs.contains(msg))
        .map(|b| b.action)
}

/// The table as the help overlay lists it: keys and what they do, one line each (a key whose
/// label is empty shares the line above).
pub fn help_lines() -> Vec<(&'static str, &'static str)> {
    BINDINGS
        .iter()
        .filter(|b| !b.keys.is_empty())
        .map(|b| (b.keys, b.help))
        .chain(TYPING.iter().copied())
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn no_message_is_bound_twice_and_every_action_has_its_help() {
        let mut seen: Vec<&Msg> = Vec::new();
        for b in BINDINGS {
            for m in b.msgs {
                assert!(!seen.contains(&m), "{m:?} bound twice");
                seen.push(m);
            }
        }
        for (keys, help) in help_lines() {
            assert!(!help.is_empty(), "{keys} has no help");
        }
    }

    #[test]
    fn a_ctrl_letter_outside_the_table_asks_for_nothing() {
        assert_eq!(action(&Msg::Ctrl('x')), None);
        assert_eq!(action(&Msg::Ctrl('z')), None);
        assert_eq!(action(&Msg::Suspend), Some(Action::Suspend));
        assert_eq!(action(&Msg::Char('x')), Some(Action::WhatIf));
    }
}
