//! The dashboard's state types: sort columns, list positions, a person's view, prompts,
//! overlays, messages, and the sizes the layout depends on.

use crate::analysis::planning::Strategy;
use crate::analysis::priority::{Part, Ranked};
use crate::metrics::outlook::Outlook;
use crate::tui::keys::Action;
use crate::workspace::{Change, PersonState};

/// Columns the priority list can be sorted by.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum SortCol {
    /// Score (the rank).
    Rank,
    /// Person ID.
    Id,
    /// Contacts.
    Degree,
    /// Cases met.
    Cases,
    /// Days left in the monitoring window.
    DaysLeft,
    /// Follow-up state.
    Followup,
    /// Manual flags.
    Flags,
}

impl SortCol {
    /// Cycle order.
    pub const ALL: [SortCol; 7] = [
        SortCol::Rank,
        SortCol::Id,
        SortCol::Degree,
        SortCol::Cases,
        SortCol::DaysLeft,
        SortCol::Followup,
        SortCol::Flags,
    ];

    /// Column title.
    pub fn name(self) -> &'static str {
        match self {
            SortCol::Rank => "rank",
            SortCol::Id => "ID",
            SortCol::Degree => "contacts",
            SortCol::Cases => "cases met",
            SortCol::DaysLeft => "days left",
            SortCol::Followup => "follow-up",
            SortCol::Flags => "flags",
        }
    }
}

/// Columns of a person's contact list.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ContactSort {
    /// Contacts' own number of contacts.
    Degree,
    /// Last exposure date.
    Last,
    /// Total minutes.
    Minutes,
    /// ID.
    Id,
}

impl ContactSort {
    /// Cycle order.
    pub const ALL: [ContactSort; 4] = [
        ContactSort::Degree,
        ContactSort::Last,
        ContactSort::Minutes,
        ContactSort::Id,
    ];

    /// Column title.
    pub fn name(self) -> &'static str {
        match self {
            ContactSort::Degree => "contacts",
            ContactSort::Last => "last exposure",
            ContactSort::Minutes => "minutes",
            ContactSort::Id => "ID",
        }
    }
}

/// A scrolling list position.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct ListPos {
    /// Selected row.
    pub selected: usize,
    /// First row shown.
    pub offset: usize,
}

impl ListPos {
    pub(crate) fn clamp(&mut self, len: usize, page: usize) {
        let page = page.max(1);
        if len == 0 {
            *self = ListPos::default();
            return;
        }
        self.selected = self.selected.min(len - 1);
        if self.selected < self.offset {
            self.offset = self.selected;
        }
        if self.selected >= self.offset + page {
            self.offset = self.selected + 1 - page;
        }
        self.offset = self.offset.min(len.saturating_sub(page));
    }

    pub(crate) fn step(&mut self, action: Action, len: usize, page: usize) -> bool {
        let last = len.saturating_sub(1);
        let s = self.selected;
        self.selected = match action {
            Action::Up => s.saturating_sub(1),
            Action::Down => (s + 1).min(last),
            Action::PageUp => s.saturating_sub(page.max(1)),
            Action::PageDown => (s + page.max(1)).min(last),
            Action::Home => 0,
            Action::End => last,
            _ => return false,
        };
        self.clamp(len, page);
        true
    }
}

/// One contact of the person shown.
#[derive(Debug, Clone, PartialEq)]
pub struct ContactRow {
    /// Node.
    pub node: u32,
    /// ID.
    pub id: String,
    /// Their number of contacts.
    pub degree: u32,
    /// First and last exposure days.
    pub first: Option<i32>,
    /// Last exposure.
    pub last: Option<i32>,
    /// Total minutes (None when no row gave one).
    pub minutes: Option<f64>,
    /// Exposure rows merged into the pair.
    pub rows: u32,
    /// Settings, comma-separated.
    pub settings: String,
    /// Who named whom: "both", "named them", "named by them".
    pub named: &'static str,
    /// Their follow-up state (workspace, else export).
    pub followup: String,
}

/// What the Person pane's lower list shows.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum PersonList {
    /// Their contacts.
    #[default]
    Contacts,
    /// Who they may have exposed along dated exposures.
    Forward,
    /// Where they may have been infected.
    Backward,
}

impl PersonList {
    /// The next list (c key).
    pub fn next(self) -> PersonList {
        match self {
            PersonList::Contacts => PersonList::Forward,
            PersonList::Forward => PersonList::Backward,
            PersonList::Backward => PersonList::Contacts,
        }
    }
}

/// One row of a chain list on the Person pane (forward: a person reached; backward: a possible
/// source).
#[derive(Debug, Clone, PartialEq)]
pub struct ChainRow {
    /// Node.
    pub node: u32,
    /// ID.
    pub id: String,
    /// Forward: generation; backward: cases met in their windows.
    pub count: u32,
    /// Earliest date.
    pub day: i32,
    /// In the people table, and as what.
    pub listed: &'static str,
    /// Their contacts.
    pub contacts: u32,
    /// Forward: the chain; backward: the meeting.
    pub via: String,
}

/// Everything shown about one person.
#[derive(Debug, Clone)]
pub struct PersonView {
    /// Node.
    pub node: u32,
    /// ID.
    pub id: String,
    /// People-table attributes, in column order.
    pub attrs: Vec<(String, String)>,
    /// Their entry on the ranked list, with rank (1-based).
    pub ranked: Option<(usize, Ranked)>,
    /// Score breakdown.
    pub parts: Vec<Part>,
    /// Workspace state.
    pub state: Option<PersonState>,
    /// Audited changes, oldest first.
    pub history: Vec<Change>,
    /// Contacts.
    pub contacts: Vec<ContactRow>,
    /// Position in the contact list.
    pub pos: ListPos,
    /// Sort column and direction (true = descending).
    pub sort: (ContactSort, bool),
    /// Which list the lower half shows.
    pub list: PersonList,
    /// The chain list (empty when `list` is Contacts).
    pub chains: Vec<ChainRow>,
    /// What the chain list is, or why it is empty.
    pub chains_note: String,
}

impl PersonView {
    /// Rows in the list shown.
    pub fn rows(&self) -> usize {
        match self.list {
            PersonList::Contacts => self.contacts.len(),
            _ => self.chains.len(),
        }
    }

    /// The person on the selected row of the list shown.
    pub fn selected_node(&self) -> Option<u32> {
        match self.list {
            PersonList::Contacts => self.contacts.get(self.pos.selected).map(|c| c.node),
            _ => self.chains.get(self.pos.selected).map(|c| c.node),
        }
    }
}

/// What a text prompt is for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Purpose {
    /// Find a person by ID (incremental).
    Search,
    /// Flag name to add or remove.
    Flag,
    /// Note text.
    Note,
    /// Export file path.
    Export,
    /// Figure file path (.svg or .png).
    Figure,
}

/// An open text prompt.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Input {
    /// What for.
    pub purpose: Purpose,
    /// Text typed so far.
    pub text: String,
}

/// Overlays drawn over the pane.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Overlay {
    /// Nothing.
    None,
    /// Key help.
    Help,
    /// Quarantined rows and field problems, scrolled to this row.
    Quarantine(usize),
}

/// The figures of the Outlook pane at the current T.
#[derive(Debug, Clone)]
pub struct OutlookNow {
    /// T (None when unknown).
    pub t: Option<f64>,
    /// Where T came from, in words.
    pub source: String,
    /// Indicators at T.
    pub at_t: Option<Outlook>,
    /// Per strategy: smallest n with R < 1 on the graph, and in the configuration model.
    pub below: Vec<(Strategy, Option<usize>, Option<usize>)>,
}

/// A message in the status line.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Message {
    /// Text.
    pub text: String,
    /// An error (drawn as a warning).
    pub error: bool,
}

/// Shares of people shown before the tail is summarised.
pub const CUTOFFS: [f64; 4] = [0.99, 0.999, 0.95, 1.0];

/// Filtered sets at least this large get their figures on a worker thread.
pub const BACKGROUND_SCOPE: usize = 50_000;

/// Smallest size at which the dashboard draws.
pub const MIN_SIZE: (u16, u16) = (80, 24);

/// Rows of the body available to a list (body minus borders, header and figure lines).
pub fn page_rows(size: (u16, u16), extra: u16) -> usize {
    // Tabs 1, filter line 1, footer 2, borders 2, table header 1.
    size.1.saturating_sub(7 + extra).max(1) as usize
}

pub(crate) fn sort_contacts(c: &mut [ContactRow], (col, desc): (ContactSort, bool)) {
    match col {
        ContactSort::Degree => c.sort_by(|a, b| a.degree.cmp(&b.degree).then(b.id.cmp(&a.id))),
        ContactSort::Last => c.sort_by(|a, b| a.last.cmp(&b.last).then(b.id.cmp(&a.id))),
        ContactSort::Minutes => c.sort_by(|a, b| {
            a.minutes
                .unwrap_or(-1.0)
                .total_cmp(&b.minutes.unwrap_or(-1.0))
                .then(b.id.cmp(&a.id))
        }),
        ContactSort::Id => c.sort_by(|a, b| b.id.cmp(&a.id)),
    }
    if desc {
        c.reverse();
    }
}
