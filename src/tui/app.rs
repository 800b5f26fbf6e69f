//! The dashboard's state and how actions change it. Every change that needs work (filtering the
//! list, opening a person, selecting a cluster, moving T) happens here, on the key press; the
//! draw code then only reads. `update` turns actions and typed text into changes, `person`
//! builds a person's view, `jobs` runs the large filtered figures on a worker thread.

mod export;
mod jobs;
mod person;
mod update;

use std::collections::HashMap;
use std::path::PathBuf;

pub use crate::analysis::filters::Filters;
use crate::analysis::filters::{cycle, FIELDS};
use crate::analysis::planning::TSource;
use crate::metrics::outlook;
use crate::tui::keys::Pane;
use crate::tui::model::{Listing, Model, ScopeStats};
use crate::tui::panes::degrees::{self, DegreesView};
use crate::tui::panes::neighbours::{self, NeighboursView};
use crate::tui::panes::outlook::{self as outlook_pane, OutlookView};
pub use crate::tui::state::*;
use crate::workspace::{PersonState, Workspace, FOLLOWUP_STATES};

/// The view models of the panes that need one.
#[derive(Debug, Clone, Default)]
pub struct Views {
    /// The Degrees pane.
    pub degrees: DegreesView,
    /// The Neighbours pane.
    pub neighbours: NeighboursView,
    /// The Outlook pane.
    pub outlook: OutlookView,
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
    /// Today's counts again after a follow-up change in this session (None: as at load).
    pub today_now: Option<crate::analysis::daywork::Today>,
    /// Today's counts being made again on a worker.
    pub today_pending:
        Option<std::sync::mpsc::Receiver<Result<crate::analysis::daywork::Today, String>>>,
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
    /// The panes' view models, recomputed when the state changes (draw code only lays them out).
    pub views: Views,
    /// The reach chart shows everyone followed (else it zooms to the R = 1 crossings).
    pub reach_all: bool,
    /// Workspace state by person ID.
    pub states: HashMap<String, PersonState>,
    /// Workspace file.
    pub workspace_path: PathBuf,
    /// The outlook computed by the model's worker has been taken up (see [`App::catch_up`]).
    outlook_ready: bool,
    /// The list ranked by the model's worker has been taken up: until then the keys that
    /// work on it wait in `queued` (see [`App::catch_up`]).
    pub listed: bool,
    /// Keys pressed before the list arrived that wait for it, in order.
    pub queued: Vec<crate::tui::keys::Action>,
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
            today_now: None,
            today_pending: None,
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
            views: Views::default(),
            reach_all: false,
            outlook_ready: false,
            listed: false,
            queued: Vec::new(),
        };
        app.set_t(m, None);
        app.update_cluster_bridges(m);
        app.refresh_views(m);
        app.catch_up(m);
        app
    }

    /// Take up work the model's workers have finished since the last call (the list, the
    /// outlook); true when something arrived (redraw).
    pub fn catch_up(&mut self, m: &Model) -> bool {
        let mut arrived = false;
        if !self.listed && m.listing.get().is_some() {
            self.listed = true;
            self.refilter(m);
            for action in std::mem::take(&mut self.queued) {
                self.act(m, action);
            }
            arrived = true;
        }
        if !self.outlook_ready && m.plan().is_some() {
            self.outlook_ready = true;
            self.set_t(m, None);
            self.views.outlook = outlook_pane::view(m, self);
            arrived = true;
        }
        arrived
    }

    /// Wait for the list and take it up (tests and benchmarks; the dashboard never waits).
    pub fn wait_listed(&mut self, m: &Model) {
        let _ = m.listing.wait();
        self.catch_up(m);
    }

    /// Recompute the panes' view models from the state.
    pub fn refresh_views(&mut self, m: &Model) {
        self.views.degrees = degrees::view(m, self);
        self.views.neighbours = neighbours::view(m, self);
        self.views.outlook = outlook_pane::view(m, self);
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
    fn order(&mut self, m: &Model, l: &Listing, col: SortCol) -> std::rc::Rc<Vec<u32>> {
        if let Some(p) = self.perms.get(&col) {
            return std::rc::Rc::clone(p);
        }
        let n = l.list.ranked.len();
        let v: Vec<u32> = match col {
            SortCol::Rank => (0..n as u32).collect(),
            SortCol::Id => l.by_id.clone(),
            SortCol::Degree => l.orders[0].clone(),
            SortCol::Cases => l.orders[1].clone(),
            SortCol::DaysLeft => l.orders[2].clone(),
            SortCol::Followup => {
                let mut key = l.index.followup.clone();
                for (id, st) in &self.states {
                    if let (Some(p), Some(f)) = (rank_of(m, id), st.followup.as_deref()) {
                        if let Some(k) = FOLLOWUP_STATES.iter().position(|&x| x == f) {
                            key[p as usize] = k as u8;
                        }
                    }
                }
                // A counting sort: one pass to count each state, one to place the rows.
                let bucket = |k: u8| (k as usize).min(FOLLOWUP_STATES.len());
                let mut start = vec![0usize; FOLLOWUP_STATES.len() + 2];
                for &k in &key {
                    start[bucket(k) + 1] += 1;
                }
                for b in 1..start.len() {
                    start[b] += start[b - 1];
                }
                let mut out = vec![0u32; key.len()];
                for (i, &k) in key.iter().enumerate() {
                    out[start[bucket(k)]] = i as u32;
                    start[bucket(k)] += 1;
                }
                out
            }
            SortCol::Flags => {
                // The flagged people (few) in rank order, then everyone else: one pass into a
                // vector of the final size.
                let mut yes: Vec<u32> = self
                    .states
                    .iter()
                    .filter(|(_, st)| !st.flags.is_empty())
                    .filter_map(|(id, _)| rank_of(m, id))
                    .collect();
                yes.sort_unstable();
                yes.dedup();
                let mut out = Vec::with_capacity(n);
                out.extend_from_slice(&yes);
                let mut next = yes.iter().peekable();
                for i in 0..n as u32 {
                    if next.peek() == Some(&&i) {
                        next.next();
                    } else {
                        out.push(i);
                    }
                }
                out
            }
        };
        let v = std::rc::Rc::new(v);
        self.perms.insert(col, std::rc::Rc::clone(&v));
        v
    }

    /// The next value of a people attribute filter (field `c` of [`FIELDS`]).
    fn cycle_field(&mut self, m: &Model, c: usize) {
        let Some(l) = m.listed() else { return };
        let next = cycle(self.filters.equals[c].as_deref(), &l.index.values[c]);
        self.filters.set(FIELDS[c], next);
        self.refilter(m);
    }

    /// Rebuild the priority rows after a filter or sort change, keeping the selected person.
    pub fn refilter(&mut self, m: &Model) {
        let Some(l) = m.listed() else { return };
        let keep_node = self
            .rows
            .get(self.prio.selected)
            .map(|&i| l.list.ranked[i as usize].node);
        let (col, desc) = self.sort;
        let order = self.order(m, l, col);
        let ranked = &l.list.ranked;
        let filtered = self.filters != Filters::default();
        if filtered && self.mask_for.as_ref() != Some(&self.filters) {
            // One pass in rank order, then the sorted order only reads the mask. Sequential on
            // purpose: the shared worker pool may be busy with the background statistics, and a
            // key must not wait for it.
            let mask: Vec<bool> = match l.index.matcher(&self.filters, &m.d) {
                Ok(k) => (0..ranked.len()).map(|i| l.index.keeps(&k, i)).collect(),
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
            .and_then(|n| l.rank_pos.get(n as usize).copied())
            .and_then(|i| self.rows.iter().position(|&r| r == i))
            .unwrap_or(0);
        let page = page_rows(self.size, 0);
        self.prio.clamp(self.rows.len(), page);
    }

    /// unknown) and recompute the Outlook figures.
    /// Set T from the keys (None: back to the T the outlook was computed with, possibly
    pub fn set_t(&mut self, m: &Model, keyed: Option<f64>) {
        let Some(plan) = m.plan() else {
            if keyed.is_some() {
                self.say(
                    "the outlook is still being computed; T can be set when it is shown",
                    true,
                );
            }
            return;
        };
        let (t, source) = match keyed {
            None => (plan.t, crate::report::outlook::assumption(plan)),
            Some(t) => {
                let t = ((t * 100.0).round() / 100.0).clamp(0.0, 1.0);
                let was = match &plan.source {
                    TSource::User => "the value given",
                    TSource::SecondaryAttackRate { .. } => "the secondary attack rate",
                    TSource::Unknown(_) => "unknown",
                };
                let source =
                    format!("T = {t:.2} set with the keys (started from {was}; 0 goes back)");
                (Some(t), source)
            }
        };
        let at_t = t.map(|t| outlook::indicators(&plan.p, t));
        let below = plan
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
    /// The terminal changed size: keep every selection on screen.
    pub fn resized(&mut self, m: &Model, width: u16, height: u16) {
        self.size = (width, height);
        self.prio.clamp(self.rows.len(), page_rows(self.size, 0));
        self.clusters
            .clamp(m.clusters.len(), page_rows(self.size, 0));
        if let Some(p) = &mut self.person {
            p.pos.clamp(p.rows(), page_rows(self.size, 12));
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
            _ => {
                let l = m.listed()?;
                self.rows
                    .get(self.prio.selected)
                    .map(|&i| l.list.ranked[i as usize].node)
            }
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
                self.recount_today(m);
                true
            }
            Err(e) => {
                self.say(format!("not saved: {e}"), true);
                false
            }
        }
    }
}

/// Position on the ranked list of the person with this ID, if in the export.
pub(crate) fn rank_of(m: &Model, id: &str) -> Option<u32> {
    let l = m.listed()?;
    m.d.ids
        .get(id)
        .and_then(|node| l.rank_pos.get(node as usize).copied())
        .filter(|&p| p != u32::MAX)
}
