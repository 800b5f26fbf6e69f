//! The key table: one list of bindings that both dispatches key presses and generates the help
//! overlay and the footer, so the three can never disagree.

use crossterm::event::{KeyCode, KeyEvent, KeyModifiers};

/// The seven panes, in number-key order.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Pane {
    /// Files, ledger, headline figures.
    Overview,
    /// p_k and q_k, fits.
    Degrees,
    /// k_nn, neighbour degrees, paradox, mixing.
    Neighbours,
    /// Components and bridges.
    Clusters,
    /// The ranked list.
    Priority,
    /// One person.
    Person,
    /// Threshold, outbreak size, reach curves.
    Outlook,
}

impl Pane {
    /// Every pane, in order.
    pub const ALL: [Pane; 7] = [
        Pane::Overview,
        Pane::Degrees,
        Pane::Neighbours,
        Pane::Clusters,
        Pane::Priority,
        Pane::Person,
        Pane::Outlook,
    ];

    /// Short name on the tab bar.
    pub fn name(self) -> &'static str {
        match self {
            Pane::Overview => "Overview",
            Pane::Degrees => "Degrees",
            Pane::Neighbours => "Neighbours",
            Pane::Clusters => "Clusters",
            Pane::Priority => "Priority",
            Pane::Person => "Person",
            Pane::Outlook => "Outlook",
        }
    }

    /// Position (0-based).
    pub fn index(self) -> usize {
        Pane::ALL.iter().position(|&p| p == self).unwrap_or(0)
    }
}

/// Everything a key can do.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Action {
    /// Leave hubwatch.
    Quit,
    /// Show or hide the key help.
    Help,
    /// Next pane.
    NextPane,
    /// Previous pane.
    PrevPane,
    /// Go to a pane.
    Go(Pane),
    /// Move up one row.
    Up,
    /// Move down one row.
    Down,
    /// Up one page.
    PageUp,
    /// Down one page.
    PageDown,
    /// First row.
    Home,
    /// Last row.
    End,
    /// Open the selected item (person, contact, cluster).
    Open,
    /// Back: previous person, or close what is open.
    Back,
    /// Search a person ID.
    Search,
    /// Show the quarantined rows and field problems.
    Quarantine,
    /// Log scale on or off.
    LogScale,
    /// Longer or shorter tail cut-off.
    Cutoff,
    /// Sort by the next column.
    SortNext,
    /// Reverse the sort.
    SortReverse,
    /// Person pane: contacts, forward chains, backward sources.
    PersonList,
    /// Cycle the role filter.
    FilterRole,
    /// Cycle the status filter.
    FilterStatus,
    /// Cycle the setting filter.
    FilterSetting,
    /// Cycle the area filter.
    FilterArea,
    /// Only people still inside their monitoring window.
    FilterWindow,
    /// Clear every filter (cluster included).
    ClearFilters,
    /// Add or remove a flag.
    Flag,
    /// Next follow-up state.
    Followup,
    /// Write a note.
    Note,
    /// Export the current view (the list, or the pane's figure).
    Export,
    /// Raise T by 0.01.
    TUp,
    /// Lower T by 0.01.
    TDown,
    /// Raise T by 0.1.
    TUpBig,
    /// Lower T by 0.1.
    TDownBig,
    /// T back to where it came from.
    TReset,
    /// The reach chart: zoom to where the strategies cross R = 1, or show everyone followed.
    ReachZoom,
    // The actions below come from typed text, the mouse and the terminal (see `event`), not
    // from the key table.
    /// A character typed into the open prompt.
    Type(char),
    /// Backspace in the open prompt.
    Erase,
    /// Enter in the open prompt: do what it asks.
    Submit,
    /// Esc in the open prompt: close it.
    Cancel,
    /// A click on the i-th shown row of the pane's list.
    ClickRow(u16),
    /// The terminal now has this many columns and rows.
    Resize(u16, u16),
}

/// Where a binding works.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Scope {
    /// Every pane.
    Global,
    /// One pane.
    In(Pane),
}

/// One binding.
#[derive(Debug, Clone, Copy)]
pub struct Binding {
    /// Keys (any of them).
    pub keys: &'static [KeyCode],
    /// Where.
    pub scope: Scope,
    /// What.
    pub action: Action,
    /// Help text.
    pub help: &'static str,
    /// Shown in the footer of its pane.
    pub footer: bool,
}

const fn b(
    keys: &'static [KeyCode],
    scope: Scope,
    action: Action,
    help: &'static str,
    footer: bool,
) -> Binding {
    Binding {
        keys,
        scope,
        action,
        help,
        footer,
    }
}

use Action as A;
use KeyCode as K;
use Pane as P;
use Scope::{Global as G, In};

/// The table. Panes' own keys come after the global ones.
pub const BINDINGS: &[Binding] = &[
    b(&[K::Char('q')], G, A::Quit, "quit", true),
    b(&[K::Char('?')], G, A::Help, "keys", true),
    b(&[K::Tab], G, A::NextPane, "next pane", false),
    b(&[K::BackTab], G, A::PrevPane, "previous pane", false),
    b(&[K::Char('1')], G, A::Go(P::Overview), "Overview", false),
    b(&[K::Char('2')], G, A::Go(P::Degrees), "Degrees", false),
    b(
        &[K::Char('3')],
        G,
        A::Go(P::Neighbours),
        "Neighbours",
        false,
    ),
    b(&[K::Char('4')], G, A::Go(P::Clusters), "Clusters", false),
    b(&[K::Char('5')], G, A::Go(P::Priority), "Priority", false),
    b(&[K::Char('6')], G, A::Go(P::Person), "Person", false),
    b(&[K::Char('7')], G, A::Go(P::Outlook), "Outlook", false),
    b(&[K::Up, K::Char('k')], G, A::Up, "up", false),
    b(&[K::Down, K::Char('j')], G, A::Down, "down", false),
    b(&[K::PageUp], G, A::PageUp, "page up", false),
    b(&[K::PageDown], G, A::PageDown, "page down", false),
    b(&[K::Home], G, A::Home, "first", false),
    b(&[K::End], G, A::End, "last", false),
    b(
        &[K::Backspace, K::Esc, K::Left, K::Char('h')],
        G,
        A::Back,
        "back / close",
        false,
    ),
    b(&[K::Char('/')], G, A::Search, "find a person by ID", true),
    b(&[K::Char('x')], G, A::ClearFilters, "clear filters", false),
    // Overview
    b(
        &[K::Char('r')],
        In(P::Overview),
        A::Quarantine,
        "quarantined rows",
        true,
    ),
    // Degrees
    b(
        &[K::Char('g')],
        In(P::Degrees),
        A::LogScale,
        "log scale",
        true,
    ),
    b(
        &[K::Char('c')],
        In(P::Degrees),
        A::Cutoff,
        "tail cut-off",
        true,
    ),
    b(
        &[K::Char('g')],
        In(P::Neighbours),
        A::LogScale,
        "log scale",
        true,
    ),
    // Clusters
    b(
        &[K::Enter, K::Char('l'), K::Right],
        In(P::Clusters),
        A::Open,
        "filter to cluster",
        true,
    ),
    // Priority
    b(
        &[K::Enter, K::Char('l'), K::Right],
        In(P::Priority),
        A::Open,
        "open person",
        true,
    ),
    b(
        &[K::Char('s')],
        In(P::Priority),
        A::SortNext,
        "sort column",
        true,
    ),
    b(
        &[K::Char('S')],
        In(P::Priority),
        A::SortReverse,
        "reverse sort",
        false,
    ),
    b(
        &[K::Char('r')],
        In(P::Priority),
        A::FilterRole,
        "role filter",
        true,
    ),
    b(
        &[K::Char('t')],
        In(P::Priority),
        A::FilterStatus,
        "status filter",
        false,
    ),
    b(
        &[K::Char('e')],
        In(P::Priority),
        A::FilterSetting,
        "setting filter",
        false,
    ),
    b(
        &[K::Char('a')],
        In(P::Priority),
        A::FilterArea,
        "area filter",
        false,
    ),
    b(
        &[K::Char('w')],
        In(P::Priority),
        A::FilterWindow,
        "still in window",
        true,
    ),
    b(&[K::Char('f')], In(P::Priority), A::Flag, "flag", true),
    b(
        &[K::Char('u')],
        In(P::Priority),
        A::Followup,
        "follow-up state",
        true,
    ),
    b(&[K::Char('n')], In(P::Priority), A::Note, "note", false),
    b(
        &[K::Char('E')],
        In(P::Priority),
        A::Export,
        "export view",
        true,
    ),
    b(
        &[K::Char('E')],
        In(P::Degrees),
        A::Export,
        "write figure (svg/png)",
        true,
    ),
    b(
        &[K::Char('E')],
        In(P::Neighbours),
        A::Export,
        "write figure (svg/png)",
        true,
    ),
    b(
        &[K::Char('E')],
        In(P::Outlook),
        A::Export,
        "write figure (svg/png)",
        true,
    ),
    // Person
    b(
        &[K::Enter, K::Char('l'), K::Right],
        In(P::Person),
        A::Open,
        "open contact",
        true,
    ),
    b(
        &[K::Char('s')],
        In(P::Person),
        A::SortNext,
        "sort contacts",
        true,
    ),
    b(
        &[K::Char('S')],
        In(P::Person),
        A::SortReverse,
        "reverse sort",
        false,
    ),
    b(
        &[K::Char('c')],
        In(P::Person),
        A::PersonList,
        "contacts / chains",
        true,
    ),
    b(&[K::Char('f')], In(P::Person), A::Flag, "flag", true),
    b(
        &[K::Char('u')],
        In(P::Person),
        A::Followup,
        "follow-up state",
        true,
    ),
    b(&[K::Char('n')], In(P::Person), A::Note, "note", true),
    // Outlook
    b(
        &[K::Char('+'), K::Char('=')],
        In(P::Outlook),
        A::TUp,
        "T + 0.01",
        true,
    ),
    b(&[K::Char('-')], In(P::Outlook), A::TDown, "T - 0.01", true),
    b(&[K::Char(']')], In(P::Outlook), A::TUpBig, "T + 0.1", false),
    b(
        &[K::Char('[')],
        In(P::Outlook),
        A::TDownBig,
        "T - 0.1",
        false,
    ),
    b(
        &[K::Char('0')],
        In(P::Outlook),
        A::TReset,
        "T as estimated",
        true,
    ),
    b(
        &[K::Char('z')],
        In(P::Outlook),
        A::ReachZoom,
        "zoom: R = 1 crossings / all",
        false,
    ),
];

/// Every action a key can have, for the completeness test (typed text, clicks and resizes
/// come from `event`).
pub fn all_actions() -> Vec<Action> {
    let mut v = vec![
        A::Quit,
        A::Help,
        A::NextPane,
        A::PrevPane,
        A::Up,
        A::Down,
        A::PageUp,
        A::PageDown,
        A::Home,
        A::End,
        A::Open,
        A::Back,
        A::Search,
        A::Quarantine,
        A::LogScale,
        A::Cutoff,
        A::SortNext,
        A::SortReverse,
        A::FilterRole,
        A::FilterStatus,
        A::FilterSetting,
        A::FilterArea,
        A::FilterWindow,
        A::ClearFilters,
        A::Flag,
        A::Followup,
        A::Note,
        A::Export,
        A::TUp,
        A::TDown,
        A::TUpBig,
        A::TDownBig,
        A::TReset,
        A::ReachZoom,
    ];
    v.extend(Pane::ALL.iter().map(|&p| A::Go(p)));
    v
}

/// Bindings active in `pane` (pane's own first, so they win over a global key).
pub fn active(pane: Pane) -> impl Iterator<Item = &'static Binding> {
    BINDINGS
        .iter()
        .filter(move |b| b.scope == In(pane))
        .chain(BINDINGS.iter().filter(|b| b.scope == G))
}

/// The action of a key press in `pane`, if any. Shift is part of the character; Ctrl-C quits.
pub fn lookup(pane: Pane, key: &KeyEvent) -> Option<Action> {
    if key.modifiers.contains(KeyModifiers::CONTROL) {
        return matches!(key.code, K::Char('c')).then_some(A::Quit);
    }
    active(pane)
        .find(|b| b.keys.contains(&key.code))
        .map(|b| b.action)
}

/// A key's name for help and footer.
pub fn key_name(k: &KeyCode) -> String {
    match k {
        K::Char(' ') => "Space".into(),
        K::Char(c) => c.to_string(),
        K::Enter => "Enter".into(),
        K::Tab => "Tab".into(),
        K::BackTab => "Shift-Tab".into(),
        K::Backspace => "Backspace".into(),
        K::Esc => "Esc".into(),
        K::Up => "↑".into(),
        K::Down => "↓".into(),
        K::Left => "←".into(),
        K::Right => "→".into(),
        K::PageUp => "PgUp".into(),
        K::PageDown => "PgDn".into(),
        K::Home => "Home".into(),
        K::End => "End".into(),
        other => format!("{other:?}"),
    }
}

/// Help lines: (scope title, keys, help), global first then per pane.
pub fn help_lines() -> Vec<(String, String, &'static str)> {
    let mut out = Vec::new();
    let scopes = std::iter::once(G).chain(Pane::ALL.iter().map(|&p| In(p)));
    for scope in scopes {
        let title = match scope {
            G => "everywhere".to_string(),
            In(p) => p.name().to_string(),
        };
        for b in BINDINGS.iter().filter(|b| b.scope == scope) {
            let keys: Vec<String> = b.keys.iter().map(key_name).collect();
            out.push((title.clone(), keys.join(" "), b.help));
        }
    }
    out
}

/// Footer items for `pane`: (first key, help).
pub fn footer(pane: Pane) -> Vec<(String, &'static str)> {
    active(pane)
        .filter(|b| b.footer)
        .map(|b| (key_name(&b.keys[0]), b.help))
        .collect()
}
