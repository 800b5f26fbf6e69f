//! The dashboard's state and how actions change it. Every change that needs work (filtering the
//! list, opening a person, selecting a cluster, moving T) happens here, on the key press; the
//! draw code then only reads.

use std::collections::HashMap;
use std::path::PathBuf;

use petgraph::visit::EdgeRef;

pub use crate::analysis::filters::Filters;
use crate::analysis::filters::{cycle, FIELDS};
use crate::analysis::planning::{Strategy, TSource};
use crate::analysis::priority::{Part, Ranked};
use crate::ingest::dates;
use crate::metrics::outlook::{self, Outlook};
use crate::report::meta::Meta;
use crate::tui::keys::{Action, Pane};
use crate::tui::model::{scope_stats, Model, ScopeStats};
use crate::workspace::{Change, PersonState, Workspace, FOLLOWUP_STATES};

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
    fn clamp(&mut self, len: usize, page: usize) {
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

    fn step(&mut self, action: Action, len: usize, page: usize) -> bool {
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

/// The dashboard state.
pub struct App {
    /// Pane shown.
    pub pane: Pane,
    /// Overlay shown.
    pub overlay: Overlay,
    /// Open prompt.
    pub input: Option<Input>,
    /// Status-line message.
    pub message: Option<Message>,
    /// Set by Quit.
    pub quit: bool,
    /// Terminal size (columns, rows), for page sizes.
    pub size: (u16, u16),
    /// Shared filters.
    pub filters: Filters,
    /// Priority list: indices into the model's ranked list, in display order.
    pub rows: Vec<u32>,
    /// Position of each ranked index in `rows` (u32::MAX: filtered out); empty until a search
    /// needs it after the rows changed.
    pub row_of: Vec<u32>,
    /// Position in the priority list.
    pub prio: ListPos,
    /// Sort of the priority list (column, descending).
    pub sort: (SortCol, bool),
    /// Person shown in the Person pane.
    pub person: Option<PersonView>,
    /// People opened before (node, position, sort), for Back.
    pub history: Vec<(u32, ListPos, (ContactSort, bool))>,
    /// Position in the cluster list.
    pub clusters: ListPos,
    /// Bridges of the highlighted cluster (ID, contacts), at most 200.
    pub cluster_bridges: Vec<(String, u32)>,
    /// Degree figures of the people the filters keep, when a filter is on.
    pub scope: Option<ScopeStats>,
    /// The filters `scope` reflects (it is recomputed when the Degrees or Neighbours pane is
    /// shown and the filters differ, not on every filter key).
    pub scope_for: Filters,
    /// Figures being computed on a worker thread for these filters.
    pub scope_pending: Option<(Filters, std::sync::mpsc::Receiver<ScopeStats>)>,
    /// The model shared with worker threads (set by the terminal loop; tests leave it empty
    /// and get every result at once).
    pub shared: Option<std::sync::Arc<Model>>,
    /// Sets at least this large go to a worker thread ([`BACKGROUND_SCOPE`]).
    pub background_min: usize,
    /// Sorted orders of the list, per column, once computed.
    perms: HashMap<SortCol, std::rc::Rc<Vec<u32>>>,
    /// Per ranked entry: kept by the filters in `mask_for`.
    mask: Vec<bool>,
    /// The filters `mask` was computed for.
    mask_for: Option<Filters>,
    /// Log scale on the charts.
    pub log_scale: bool,
    /// Tail cut-off: index into [`CUTOFFS`].
    pub cutoff: usize,
    /// Outlook at the current T.
    pub outlook: OutlookNow,
    /// Workspace state by person ID.
    pub states: HashMap<String, PersonState>,
    /// Workspace file.
    pub workspace_path: PathBuf,
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

impl App {
    /// Fresh state over a model.
    pub fn new(m: &Model, states: Vec<PersonState>) -> App {
        let states = states
            .into_iter()
            .map(|s| (s.person_id.clone(), s))
            .collect();
        let mut app = App {
            pane: Pane::Overview,
            overlay: Overlay::None,
            input: None,
            message: None,
            quit: false,
            size: (120, 40),
            filters: Filters::default(),
            rows: Vec::new(),
            row_of: Vec::new(),
            prio: ListPos::default(),
            sort: (SortCol::Rank, false),
            person: None,
            history: Vec::new(),
            clusters: ListPos::default(),
            cluster_bridges: Vec::new(),
            scope: None,
            scope_for: Filters::default(),
            scope_pending: None,
            shared: None,
            background_min: BACKGROUND_SCOPE,
            perms: HashMap::new(),
            mask: Vec::new(),
            mask_for: None,
            log_scale: false,
            cutoff: 0,
            outlook: OutlookNow {
                t: None,
                source: String::new(),
                at_t: None,
                below: Vec::new(),
            },
            states,
            workspace_path: m.workspace_path.clone(),
        };
        app.refilter(m);
        app.set_t(m, None);
        app.update_cluster_bridges(m);
        app
    }

    /// The degree figures in scope: the selected cluster's, else the whole network's.
    pub fn scope<'a>(&'a self, m: &'a Model) -> &'a ScopeStats {
        self.scope.as_ref().unwrap_or(&m.whole)
    }

    /// Follow-up state of a person: workspace first, else the export's column.
    pub fn followup(&self, m: &Model, node: u32) -> String {
        let id = m.d.ids.name(node);
        self.states
            .get(id)
            .and_then(|s| s.followup.clone())
            .or_else(|| m.d.attrs.get("followup_status", node).map(str::to_string))
            .unwrap_or_default()
    }

    /// Manual flags of a person, comma-separated.
    pub fn flags(&self, m: &Model, node: u32) -> String {
        self.states
            .get(m.d.ids.name(node))
            .map(|s| s.flags.join(","))
            .unwrap_or_default()
    }

    /// The filters in words (always shown).
    pub fn filter_text(&self, _m: &Model) -> String {
        self.filters.describe()
    }

    /// All ranked indices in the order of a sort column (ascending as the column reads:
    /// most contacts / cases first, fewest days left first). The fixed columns come from the
    /// model; follow-up and flags depend on the workspace, are bucketed in one pass (ties in
    /// rank order), kept, and dropped whenever the workspace changes.
    fn order(&mut self, m: &Model, col: SortCol) -> std::rc::Rc<Vec<u32>> {
        if let Some(p) = self.perms.get(&col) {
            return std::rc::Rc::clone(p);
        }
        let n = m.list.ranked.len();
        let v: Vec<u32> = match col {
            SortCol::Rank => (0..n as u32).collect(),
            SortCol::Id => m.by_id.clone(),
            SortCol::Degree => m.orders[0].clone(),
            SortCol::Cases => m.orders[1].clone(),
            SortCol::DaysLeft => m.orders[2].clone(),
            SortCol::Followup => {
                let mut key = m.index.followup.clone();
                for (id, st) in &self.states {
                    if let (Some(p), Some(f)) = (rank_of(m, id), st.followup.as_deref()) {
                        if let Some(k) = FOLLOWUP_STATES.iter().position(|&x| x == f) {
                            key[p as usize] = k as u8;
                        }
                    }
                }
                let mut buckets = vec![Vec::new(); FOLLOWUP_STATES.len() + 1];
                for (i, &k) in key.iter().enumerate() {
                    buckets[(k as usize).min(FOLLOWUP_STATES.len())].push(i as u32);
                }
                buckets.concat()
            }
            SortCol::Flags => {
                let mut flagged = vec![false; n];
                for (id, st) in &self.states {
                    if st.flags.is_empty() {
                        continue;
                    }
                    if let Some(p) = rank_of(m, id) {
                        flagged[p as usize] = true;
                    }
                }
                let (mut yes, no): (Vec<u32>, Vec<u32>) =
                    (0..n as u32).partition(|&i| flagged[i as usize]);
                yes.extend(no);
                yes
            }
        };
        let v = std::rc::Rc::new(v);
        self.perms.insert(col, std::rc::Rc::clone(&v));
        v
    }

    /// The next value of a people attribute filter (field `c` of [`FIELDS`]).
    fn cycle_field(&mut self, m: &Model, c: usize) {
        let next = cycle(self.filters.equals[c].as_deref(), &m.index.values[c]);
        self.filters.set(FIELDS[c], next);
        self.refilter(m);
    }

    /// Rebuild the priority rows after a filter or sort change, keeping the selected person.
    pub fn refilter(&mut self, m: &Model) {
        let keep_node = self
            .rows
            .get(self.prio.selected)
            .map(|&i| m.list.ranked[i as usize].node);
        let (col, desc) = self.sort;
        let order = self.order(m, col);
        let ranked = &m.list.ranked;
        let filtered = self.filters != Filters::default();
        if filtered && self.mask_for.as_ref() != Some(&self.filters) {
            // One pass in rank order (sequential), then the sorted order only reads the mask.
            let mask: Vec<bool> = match m.index.matcher(&self.filters, &m.d) {
                Ok(k) => (0..ranked.len()).map(|i| m.index.keeps(&k, i)).collect(),
                Err(_) => vec![true; ranked.len()],
            };
            self.mask = mask;
            self.mask_for = Some(self.filters.clone());
        }
        let mask = &self.mask;
        let keep = |i: &u32| !filtered || mask[*i as usize];
        let mut rows = std::mem::take(&mut self.rows);
        rows.clear();
        if desc {
            rows.extend(order.iter().rev().filter(|i| keep(i)));
        } else if filtered {
            rows.extend(order.iter().filter(|i| keep(i)));
        } else {
            rows.extend_from_slice(&order);
        }
        self.rows = rows;
        // Positions are rebuilt when a search needs them, not on every filter key.
        self.row_of.clear();
        self.prio.selected = keep_node
            .and_then(|n| m.rank_pos.get(n as usize).copied())
            .and_then(|i| self.rows.iter().position(|&r| r == i))
            .unwrap_or(0);
        let page = page_rows(self.size, 0);
        self.prio.clamp(self.rows.len(), page);
    }

    /// Recompute the Degrees and Neighbours figures for the people the filters keep (their
    /// contacts counted in the whole network); whole network when no filter is on.
    pub fn rescope(&mut self, m: &Model) {
        self.scope_for = self.filters.clone();
        self.scope_pending = None;
        if self.filters == Filters::default() {
            self.scope = None;
            return;
        }
        let label = format!("{} ({} people)", self.filter_text(m), self.rows.len());
        let nodes_of = |m: &Model, rows: &[u32]| -> Vec<u32> {
            rows.iter()
                .map(|&i| m.list.ranked[i as usize].node)
                .collect()
        };
        match &self.shared {
            // Large sets on a worker thread: the key is answered at once, the pane says
            // "computing" until the figures arrive (see `poll_jobs`).
            Some(shared) if self.rows.len() >= self.background_min => {
                let (tx, rx) = std::sync::mpsc::channel();
                let shared = std::sync::Arc::clone(shared);
                let rows = self.rows.clone();
                std::thread::spawn(move || {
                    let nodes = nodes_of(&shared, &rows);
                    let s = scope_stats(&shared.d, &shared.stats.degrees, &nodes, label);
                    let _ = tx.send(s);
                });
                self.scope = None;
                self.scope_pending = Some((self.filters.clone(), rx));
            }
            _ => {
                let nodes = nodes_of(m, &self.rows);
                self.scope = Some(scope_stats(&m.d, &m.stats.degrees, &nodes, label));
            }
        }
    }

    /// Take finished background work; true when something arrived (redraw).
    pub fn poll_jobs(&mut self) -> bool {
        let Some((filters, rx)) = &self.scope_pending else {
            return false;
        };
        match rx.try_recv() {
            Ok(s) => {
                if *filters == self.filters {
                    self.scope = Some(s);
                }
                self.scope_pending = None;
                true
            }
            Err(std::sync::mpsc::TryRecvError::Empty) => false,
            Err(std::sync::mpsc::TryRecvError::Disconnected) => {
                self.scope_pending = None;
                self.say("the filtered figures could not be computed", true);
                true
            }
        }
    }

    /// Set T from the keys (None: back to the T the outlook was computed with, possibly
    /// unknown) and recompute the Outlook figures.
    pub fn set_t(&mut self, m: &Model, keyed: Option<f64>) {
        let (t, source) = match keyed {
            None => (m.plan.t, m.plan.assumption()),
            Some(t) => {
                let t = ((t * 100.0).round() / 100.0).clamp(0.0, 1.0);
                let was = match &m.plan.source {
                    TSource::User => "the value given",
                    TSource::SecondaryAttackRate { .. } => "the secondary attack rate",
                    TSource::Unknown(_) => "unknown",
                };
                let source =
                    format!("T = {t:.2} set with the keys (started from {was}; 0 goes back)");
                (Some(t), source)
            }
        };
        let at_t = t.map(|t| outlook::indicators(&m.plan.p, t));
        let below = m
            .plan
            .strategies
            .iter()
            .map(|s| {
                (
                    s.strategy,
                    t.and_then(|t| s.below_one(t)),
                    t.and_then(|t| s.model_below_one(t)),
                )
            })
            .collect();
        self.outlook = OutlookNow {
            t,
            source,
            at_t,
            below,
        };
    }

    fn update_cluster_bridges(&mut self, m: &Model) {
        self.cluster_bridges.clear();
        if let Some(c) = m.clusters.get(self.clusters.selected) {
            let labels = &m.stats.components.0;
            self.cluster_bridges = m
                .stats
                .bridges
                .iter()
                .filter(|&&b| labels[b as usize] == c.label)
                .take(200)
                .map(|&b| (m.d.ids.name(b).to_string(), m.stats.degrees[b as usize]))
                .collect();
            self.cluster_bridges
                .sort_by(|a, b| b.1.cmp(&a.1).then(a.0.cmp(&b.0)));
        }
    }

    /// Build the view of one person.
    pub fn person_view(&self, m: &Model, node: u32, sort: (ContactSort, bool)) -> PersonView {
        let d = &m.d;
        let id = d.ids.name(node).to_string();
        let attrs = d
            .attrs
            .names
            .iter()
            .enumerate()
            .filter_map(|(c, name)| {
                d.attrs.values[c]
                    .get(node as usize)
                    .and_then(|v| v.as_deref())
                    .map(|v| (name.clone(), v.to_string()))
            })
            .collect();
        let ranked = m
            .rank_pos
            .get(node as usize)
            .filter(|&&p| p != u32::MAX)
            .map(|&p| (p as usize + 1, m.list.ranked[p as usize].clone()));
        let parts = ranked
            .as_ref()
            .map(|(_, r)| r.parts(&m.list.preset.1))
            .unwrap_or_default();
        let history = if self.workspace_path.exists() {
            Workspace::open(&self.workspace_path)
                .and_then(|w| w.audit(Some(&id)))
                .unwrap_or_default()
        } else {
            Vec::new()
        };
        let mut contacts: Vec<ContactRow> = d
            .graph
            .edges(node)
            .map(|e| {
                let w = e.target();
                let ei = *e.weight() as usize;
                let ed = &d.edges;
                let date = |x: i32| (x != crate::ingest::reconcile::NO_DATE).then_some(x);
                let named_by_a = ed.a_named_b[ei];
                let named_by_b = ed.rows[ei] - named_by_a;
                let (mine, theirs) = if ed.a[ei] == node {
                    (named_by_a, named_by_b)
                } else {
                    (named_by_b, named_by_a)
                };
                let named = match (mine > 0, theirs > 0) {
                    (true, true) => "both",
                    (true, false) => "named them",
                    (false, true) => "named by them",
                    (false, false) => "-",
                };
                ContactRow {
                    node: w,
                    id: d.ids.name(w).to_string(),
                    degree: m.stats.degrees[w as usize],
                    first: date(ed.first[ei]),
                    last: date(ed.last[ei]),
                    minutes: Some(ed.minutes[ei]).filter(|x| !x.is_nan()),
                    rows: ed.rows[ei],
                    settings: ed
                        .settings(ei)
                        .iter()
                        .map(|&c| d.settings[c as usize - 1].as_str())
                        .collect::<Vec<_>>()
                        .join(","),
                    named,
                    followup: self.followup(m, w),
                }
            })
            .collect();
        sort_contacts(&mut contacts, sort);
        PersonView {
            node,
            state: self.states.get(&id).cloned(),
            id,
            attrs,
            ranked,
            parts,
            history,
            contacts,
            pos: ListPos::default(),
            sort,
        }
    }

    /// Show a person again at a given position and sort (back in the walk, or after a change).
    fn show_person(&mut self, m: &Model, node: u32, pos: ListPos, sort: (ContactSort, bool)) {
        let mut v = self.person_view(m, node, sort);
        v.pos = pos;
        self.person = Some(v);
    }

    fn open_person(&mut self, m: &Model, node: u32, push: bool) {
        if push {
            if let Some(p) = &self.person {
                self.history.push((p.node, p.pos, p.sort));
            }
        }
        let sort = self
            .person
            .as_ref()
            .map(|p| p.sort)
            .unwrap_or((ContactSort::Degree, true));
        self.person = Some(self.person_view(m, node, sort));
        self.pane = Pane::Person;
    }

    /// The terminal changed size: keep every selection on screen.
    pub fn resized(&mut self, m: &Model, width: u16, height: u16) {
        self.size = (width, height);
        self.prio.clamp(self.rows.len(), page_rows(self.size, 0));
        self.clusters
            .clamp(m.clusters.len(), page_rows(self.size, 0));
        if let Some(p) = &mut self.person {
            p.pos.clamp(p.contacts.len(), page_rows(self.size, 12));
        }
    }

    /// A click on the i-th shown row of the priority list.
    pub fn click_row(&mut self, m: &Model, i: usize) {
        let target = self.prio.offset + i;
        if target < self.rows.len() {
            self.prio.selected = target;
            self.prio.clamp(self.rows.len(), page_rows(self.size, 0));
        }
        let _ = m;
    }

    /// A click on the i-th shown row of the cluster list.
    pub fn click_cluster(&mut self, m: &Model, i: usize) {
        let target = self.clusters.offset + i;
        if target < m.clusters.len() {
            self.clusters.selected = target;
            self.clusters
                .clamp(m.clusters.len(), page_rows(self.size, 0));
            self.update_cluster_bridges(m);
        }
    }

    /// The person an action applies to: the Person pane's, or the selected priority row.
    pub fn target(&self, m: &Model) -> Option<u32> {
        match self.pane {
            Pane::Person => self.person.as_ref().map(|p| p.node),
            _ => self
                .rows
                .get(self.prio.selected)
                .map(|&i| m.list.ranked[i as usize].node),
        }
    }

    fn say(&mut self, text: impl Into<String>, error: bool) {
        self.message = Some(Message {
            text: text.into(),
            error,
        });
    }

    fn write_state(
        &mut self,
        m: &Model,
        node: u32,
        f: impl FnOnce(&mut Workspace, &str) -> crate::error::Result<i64>,
    ) -> bool {
        let id = m.d.ids.name(node).to_string();
        let result = Workspace::open(&self.workspace_path).and_then(|mut w| {
            f(&mut w, &id)?;
            w.get(&id)
        });
        match result {
            Ok(state) => {
                self.perms.remove(&SortCol::Followup);
                self.perms.remove(&SortCol::Flags);
                match state {
                    Some(s) => {
                        self.states.insert(id.clone(), s);
                    }
                    None => {
                        self.states.remove(&id);
                    }
                }
                if matches!(self.sort.0, SortCol::Followup | SortCol::Flags) {
                    self.refilter(m);
                }
                if let Some(p) = &self.person {
                    let (node, pos, sort) = (p.node, p.pos, p.sort);
                    self.show_person(m, node, pos, sort);
                }
                true
            }
            Err(e) => {
                self.say(format!("not saved: {e}"), true);
                false
            }
        }
    }

    /// Handle a key's action.
    pub fn act(&mut self, m: &Model, action: Action) {
        self.act_inner(m, action);
        if self.filters != self.scope_for && matches!(self.pane, Pane::Degrees | Pane::Neighbours) {
            self.rescope(m);
        }
    }

    fn act_inner(&mut self, m: &Model, action: Action) {
        self.message = None;
        if let Overlay::Quarantine(pos) = self.overlay {
            let len = m.d.ledger.quarantined.len() + m.d.ledger.problems.len();
            let page = page_rows(self.size, 0);
            let mut lp = ListPos {
                selected: pos,
                offset: pos,
            };
            match action {
                Action::Back | Action::Quarantine => self.overlay = Overlay::None,
                Action::Quit => self.quit = true,
                a => {
                    lp.step(a, len, page);
                    self.overlay = Overlay::Quarantine(lp.selected);
                }
            }
            return;
        }
        if self.overlay == Overlay::Help {
            self.overlay = Overlay::None;
            if action == Action::Quit {
                self.quit = true;
            }
            return;
        }
        let page = page_rows(self.size, 0);
        match action {
            Action::Quit => self.quit = true,
            Action::Help => self.overlay = Overlay::Help,
            Action::NextPane => self.pane = Pane::ALL[(self.pane.index() + 1) % 7],
            Action::PrevPane => self.pane = Pane::ALL[(self.pane.index() + 6) % 7],
            Action::Go(p) => self.pane = p,
            Action::Up
            | Action::Down
            | Action::PageUp
            | Action::PageDown
            | Action::Home
            | Action::End => match self.pane {
                Pane::Priority => {
                    self.prio.step(action, self.rows.len(), page);
                }
                Pane::Clusters => {
                    self.clusters.step(action, m.clusters.len(), page);
                    self.update_cluster_bridges(m);
                }
                Pane::Person => {
                    if let Some(p) = &mut self.person {
                        let page = page_rows(self.size, 12);
                        p.pos.step(action, p.contacts.len(), page);
                    }
                }
                Pane::Overview if action == Action::Down => {
                    self.overlay = Overlay::Quarantine(0);
                }
                _ => {}
            },
            Action::Open => match self.pane {
                Pane::Priority => {
                    if let Some(node) = self.target(m) {
                        self.history.clear();
                        self.person = None;
                        self.open_person(m, node, false);
                    }
                }
                Pane::Person => {
                    let next = self
                        .person
                        .as_ref()
                        .and_then(|p| p.contacts.get(p.pos.selected))
                        .map(|c| c.node);
                    if let Some(n) = next {
                        self.open_person(m, n, true);
                    }
                }
                Pane::Clusters => {
                    if let Some(c) = m.clusters.get(self.clusters.selected) {
                        self.filters.cluster = Some(c.label);
                        self.refilter(m);
                        self.say(
                            format!(
                                "filtered to cluster #{} ({} people); x clears",
                                c.label + 1,
                                c.size
                            ),
                            false,
                        );
                    }
                }
                _ => {}
            },
            Action::Back => {
                if self.pane == Pane::Person {
                    if let Some((node, pos, sort)) = self.history.pop() {
                        self.show_person(m, node, pos, sort);
                    } else {
                        self.pane = Pane::Priority;
                    }
                }
            }
            Action::Search => {
                self.input = Some(Input {
                    purpose: Purpose::Search,
                    text: String::new(),
                });
            }
            Action::Quarantine => self.overlay = Overlay::Quarantine(0),
            Action::LogScale => self.log_scale = !self.log_scale,
            Action::Cutoff => self.cutoff = (self.cutoff + 1) % CUTOFFS.len(),
            Action::SortNext | Action::SortReverse => {
                if self.pane == Pane::Person {
                    if let Some(p) = &mut self.person {
                        let (col, desc) = p.sort;
                        p.sort = if action == Action::SortReverse {
                            (col, !desc)
                        } else {
                            let i = ContactSort::ALL.iter().position(|&c| c == col).unwrap_or(0);
                            (ContactSort::ALL[(i + 1) % ContactSort::ALL.len()], true)
                        };
                        sort_contacts(&mut p.contacts, p.sort);
                        p.pos = ListPos::default();
                    }
                } else {
                    let (col, desc) = self.sort;
                    self.sort = if action == Action::SortReverse {
                        (col, !desc)
                    } else {
                        let i = SortCol::ALL.iter().position(|&c| c == col).unwrap_or(0);
                        (SortCol::ALL[(i + 1) % SortCol::ALL.len()], false)
                    };
                    self.refilter(m);
                }
            }
            Action::FilterRole => self.cycle_field(m, 0),
            Action::FilterStatus => self.cycle_field(m, 1),
            Action::FilterArea => self.cycle_field(m, 2),
            Action::FilterSetting => {
                self.filters.setting = cycle(self.filters.setting.as_deref(), &m.d.settings);
                self.refilter(m);
            }
            Action::FilterWindow => {
                self.filters.still_in_window = !self.filters.still_in_window;
                self.refilter(m);
            }
            Action::ClearFilters => {
                self.filters = Filters::default();
                self.scope = None;
                self.refilter(m);
                self.say("filters cleared", false);
            }
            Action::Flag => {
                if self.target(m).is_some() {
                    self.input = Some(Input {
                        purpose: Purpose::Flag,
                        text: String::new(),
                    });
                }
            }
            Action::Note => {
                if let Some(node) = self.target(m) {
                    let old = self
                        .states
                        .get(m.d.ids.name(node))
                        .and_then(|s| s.note.clone())
                        .unwrap_or_default();
                    self.input = Some(Input {
                        purpose: Purpose::Note,
                        text: old,
                    });
                }
            }
            Action::Followup => {
                if let Some(node) = self.target(m) {
                    let now = self
                        .states
                        .get(m.d.ids.name(node))
                        .and_then(|s| s.followup.clone());
                    let i = now
                        .and_then(|s| FOLLOWUP_STATES.iter().position(|&x| x == s))
                        .map(|i| (i + 1) % FOLLOWUP_STATES.len())
                        .unwrap_or(0);
                    let state = FOLLOWUP_STATES[i];
                    if self.write_state(m, node, |w, id| w.set_followup(id, state)) {
                        self.say(
                            format!("{}: follow-up set to {state}", m.d.ids.name(node)),
                            false,
                        );
                    }
                }
            }
            Action::Export => {
                let name = format!("hubwatch-view-{}.csv", dates::iso(m.d.as_of));
                self.input = Some(Input {
                    purpose: Purpose::Export,
                    text: m.export_dir.join(name).display().to_string(),
                });
            }
            Action::TUp | Action::TDown | Action::TUpBig | Action::TDownBig => {
                let step = match action {
                    Action::TUp => 0.01,
                    Action::TDown => -0.01,
                    Action::TUpBig => 0.1,
                    _ => -0.1,
                };
                let t = self.outlook.t.unwrap_or(0.0) + step;
                self.set_t(m, Some(t));
            }
            Action::TReset => self.set_t(m, None),
        }
    }

    /// A character typed into the open prompt (or Backspace / Enter / Esc).
    pub fn type_key(&mut self, m: &Model, key: crossterm::event::KeyCode) {
        use crossterm::event::KeyCode as K;
        let Some(input) = &mut self.input else {
            return;
        };
        match key {
            K::Esc => {
                self.input = None;
                return;
            }
            K::Enter => {
                let input = self.input.take().expect("input open");
                self.commit(m, input);
                return;
            }
            K::Backspace => {
                input.text.pop();
            }
            K::Char(c) if !c.is_control() => {
                if input.text.chars().count() < 500 {
                    input.text.push(c);
                }
            }
            _ => return,
        }
        if input.purpose == Purpose::Search {
            let text = input.text.clone();
            self.search(m, &text);
        }
    }

    /// Move the priority selection to the first person whose ID matches `text` (exact first,
    /// then by prefix, case-insensitive).
    pub fn search(&mut self, m: &Model, text: &str) {
        if text.is_empty() {
            return;
        }
        if self.pane != Pane::Priority && self.pane != Pane::Person {
            self.pane = Pane::Priority;
        }
        if self.row_of.len() != m.list.ranked.len() {
            self.row_of.clear();
            self.row_of.resize(m.list.ranked.len(), u32::MAX);
            for (p, &i) in self.rows.iter().enumerate() {
                self.row_of[i as usize] = p as u32;
            }
        }
        let found = match rank_of(m, text) {
            Some(i) => Some(self.row_of[i as usize]).filter(|&p| p != u32::MAX),
            None => {
                // IDs in text order: binary search for the prefix, then the first one shown.
                let ids = &m.d.ids;
                let name = |i: u32| ids.name(m.list.ranked[i as usize].node);
                let start = m.by_id.partition_point(|&i| name(i) < text);
                let sorted = m
                    .by_id
                    .get(start..)
                    .unwrap_or(&[])
                    .iter()
                    .take_while(|&&i| name(i).starts_with(text))
                    .map(|&i| self.row_of[i as usize])
                    .find(|&p| p != u32::MAX);
                // Numeric IDs are in number order, and case may differ: then scan the rows.
                sorted.or_else(|| {
                    let lower = text.to_lowercase();
                    self.rows
                        .iter()
                        .position(|&i| {
                            let id = name(i);
                            id.len() >= lower.len()
                                && id.as_bytes()[..lower.len()]
                                    .eq_ignore_ascii_case(lower.as_bytes())
                        })
                        .map(|p| p as u32)
                })
            }
        };
        match found {
            Some(p) => {
                self.pane = Pane::Priority;
                self.prio.selected = p as usize;
                let page = page_rows(self.size, 0);
                self.prio.clamp(self.rows.len(), page);
            }
            None => {
                let hidden = m.d.ids.get(text).is_some();
                self.say(
                    if hidden {
                        format!("{text} is in the export but hidden by the filters (x clears them)")
                    } else {
                        format!("no person ID starts with {text}")
                    },
                    !hidden,
                );
            }
        }
    }

    fn commit(&mut self, m: &Model, input: Input) {
        match input.purpose {
            Purpose::Search => {}
            Purpose::Flag => {
                let Some(node) = self.target(m) else { return };
                let flag = if input.text.trim().is_empty() {
                    "call first".to_string()
                } else {
                    input.text.trim().to_string()
                };
                let has = self
                    .states
                    .get(m.d.ids.name(node))
                    .is_some_and(|s| s.flags.contains(&flag));
                let ok = if has {
                    self.write_state(m, node, |w, id| w.remove_flag(id, &flag))
                } else {
                    self.write_state(m, node, |w, id| w.add_flag(id, &flag))
                };
                if ok {
                    let verb = if has { "removed" } else { "added" };
                    self.say(
                        format!("{}: flag \"{flag}\" {verb}", m.d.ids.name(node)),
                        false,
                    );
                }
            }
            Purpose::Note => {
                let Some(node) = self.target(m) else { return };
                let text = input.text.trim().to_string();
                let note = (!text.is_empty()).then_some(text.as_str());
                if self.write_state(m, node, |w, id| w.set_note(id, note)) {
                    self.say(format!("{}: note saved", m.d.ids.name(node)), false);
                }
            }
            Purpose::Export => {
                let path = PathBuf::from(input.text.trim());
                match self.export_view(m, &path) {
                    Ok(n) => self.say(format!("wrote {n} people to {}", path.display()), false),
                    Err(e) => self.say(format!("export failed: {e}"), true),
                }
            }
        }
    }

    /// Write the priority list as shown (filters and sort) with the export module.
    pub fn export_view(&self, m: &Model, path: &std::path::Path) -> crate::error::Result<usize> {
        let format = crate::export::format_for(path, None)?;
        let ranked: Vec<Ranked> = self
            .rows
            .iter()
            .map(|&i| m.list.ranked[i as usize].clone())
            .collect();
        let states: Vec<PersonState> = self.states.values().cloned().collect();
        let direct = Vec::new();
        let ids = crate::report::tables::Ids {
            d: &m.d,
            key: None,
            direct_identifiers: &direct,
        };
        let mut table = crate::report::tables::priority_table(
            &ids,
            &ranked,
            &m.list.preset.1,
            &states,
            0,
            false,
        );
        // The rank column numbers the rows as shown; keep the list's own rank beside it.
        if let Some(c) = table.columns.iter().position(|c| c == "rank") {
            table.columns[c] = "row".into();
            table.columns.insert(c + 1, "rank".into());
            for (row, &i) in table.rows.iter_mut().zip(&self.rows) {
                row.insert(c + 1, crate::export::Cell::Int(i as i64 + 1));
            }
        }
        let sort = format!(
            "{}{}",
            self.sort.0.name(),
            if self.sort.1 { " (reversed)" } else { "" }
        );
        let meta = Meta::new(&m.d, "dashboard view")
            .ranking(&m.list)
            .with("filters", self.filter_text(m))
            .with("sort", sort)
            .finish();
        crate::export::write(&table, &meta, format, path, false)?;
        Ok(table.rows.len())
    }
}

/// Position on the ranked list of the person with this ID, if in the export.
fn rank_of(m: &Model, id: &str) -> Option<u32> {
    m.d.ids
        .get(id)
        .and_then(|node| m.rank_pos.get(node as usize).copied())
        .filter(|&p| p != u32::MAX)
}

fn sort_contacts(c: &mut [ContactRow], (col, desc): (ContactSort, bool)) {
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
