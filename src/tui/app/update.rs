//! How actions and typed text change the dashboard's state: the one dispatch of every
//! `Action`, the prompt (search, flag, note, export path) and the export of the view.

use std::path::PathBuf;

use super::{
    page_rows, rank_of, App, ContactSort, Input, ListPos, Overlay, Purpose, SortCol, CUTOFFS,
};
use crate::analysis::filters::{cycle, Filters};
use crate::ingest::dates;
use crate::tui::keys::{Action, Pane};
use crate::tui::model::Model;
use crate::tui::state::sort_contacts;
use crate::workspace::FOLLOWUP_STATES;

impl App {
    /// Handle a key's action.
    pub fn act(&mut self, m: &Model, action: Action) {
        if !self.listed {
            self.catch_up(m);
        }
        // Until the list is ranked, a key that works on it (and every key after it, to keep
        // their order) waits in a queue and takes effect when the list arrives; the key is
        // answered at once. Quit and resizes never wait.
        let now = matches!(action, Action::Quit | Action::Resize(..));
        if !self.listed && !now && (!self.queued.is_empty() || self.needs_list(action)) {
            self.queued.push(action);
            self.say(
                "the priority list is still being ranked; this key takes effect when it \
                 appears",
                false,
            );
            return;
        }
        match action {
            Action::Type(_) | Action::Erase | Action::Submit | Action::Cancel => {
                self.edit_prompt(m, action)
            }
            Action::ClickRow(i) => match self.pane {
                Pane::Priority => self.click_row(m, i as usize),
                Pane::Clusters => self.click_cluster(m, i as usize),
                _ => {}
            },
            Action::Resize(w, h) => self.resized(m, w, h),
            _ => self.act_inner(m, action),
        }
        if self.filters != self.scope_for && matches!(self.pane, Pane::Degrees | Pane::Neighbours) {
            self.rescope(m);
        }
        self.refresh_views(m);
    }

    /// Whether an action works on the priority list (and so waits until it is ranked):
    /// moving, panes, overlays, charts and T do not.
    fn needs_list(&self, action: Action) -> bool {
        if self.overlay != Overlay::None || self.input.is_some() {
            return false;
        }
        match action {
            Action::Open
            | Action::Search
            | Action::SortNext
            | Action::SortReverse
            | Action::PersonList
            | Action::FilterRole
            | Action::FilterStatus
            | Action::FilterSetting
            | Action::FilterArea
            | Action::FilterWindow
            | Action::ClearFilters
            | Action::Flag
            | Action::Note
            | Action::Followup => true,
            Action::Export => {
                !matches!(self.pane, Pane::Degrees | Pane::Neighbours | Pane::Outlook)
            }
            _ => false,
        }
    }

    pub(super) fn act_inner(&mut self, m: &Model, action: Action) {
        self.message = None;
        if self.overlay_key(m, action) {
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
            | Action::End => self.move_in_pane(m, action, page),
            Action::Open => self.open_in_pane(m),
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
            Action::SortNext | Action::SortReverse => self.sort_by(m, action),
            Action::PersonList => {
                if let Some(p) = &self.person {
                    let (node, sort, list) = (p.node, p.sort, p.list.next());
                    let v = self.person_view(m, node, sort, list);
                    self.person = Some(v);
                }
            }
            Action::FilterRole
            | Action::FilterStatus
            | Action::FilterArea
            | Action::FilterSetting
            | Action::FilterWindow
            | Action::ClearFilters => self.filter_action(m, action),
            Action::Flag | Action::Note | Action::Followup => self.person_state(m, action),
            Action::Export => {
                let (purpose, name) = match self.pane {
                    Pane::Degrees | Pane::Neighbours | Pane::Outlook => (
                        Purpose::Figure,
                        format!(
                            "hubwatch-{}-{}.svg",
                            self.pane_figure_name(m),
                            dates::iso(m.d.as_of)
                        ),
                    ),
                    _ => (
                        Purpose::Export,
                        format!("hubwatch-view-{}.csv", dates::iso(m.d.as_of)),
                    ),
                };
                self.input = Some(Input {
                    purpose,
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
            Action::ReachZoom => self.reach_all = !self.reach_all,
            // Typed text, clicks and resizes are dispatched by `act`.
            Action::Type(_)
            | Action::Erase
            | Action::Submit
            | Action::Cancel
            | Action::ClickRow(_)
            | Action::Resize(..) => {}
        }
    }

    /// A filter key: cycle a field's value, toggle the window filter, or clear them all.
    fn filter_action(&mut self, m: &Model, action: Action) {
        match action {
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
            _ => {
                self.filters = Filters::default();
                self.scope = None;
                self.refilter(m);
                self.say("filters cleared", false);
            }
        }
    }

    /// Keys while an overlay is open: the quarantine list scrolls, help closes on any key.
    /// True when the key was the overlay's.
    fn overlay_key(&mut self, m: &Model, action: Action) -> bool {
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
            return true;
        }
        if self.overlay == Overlay::Help {
            self.overlay = Overlay::None;
            if action == Action::Quit {
                self.quit = true;
            }
            return true;
        }
        false
    }

    /// Up, down, page and ends in the pane's list (Down on the Overview opens the quarantine).
    fn move_in_pane(&mut self, m: &Model, action: Action, page: usize) {
        match self.pane {
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
                    p.pos.step(action, p.rows(), page);
                }
            }
            Pane::Overview if action == Action::Down => {
                self.overlay = Overlay::Quarantine(0);
            }
            _ => {}
        }
    }

    /// Enter: open the selected person or contact, or filter to the selected cluster.
    fn open_in_pane(&mut self, m: &Model) {
        match self.pane {
            Pane::Priority => {
                if let Some(node) = self.target(m) {
                    self.history.clear();
                    self.person = None;
                    self.open_person(m, node, false);
                }
            }
            Pane::Person => {
                let next = self.person.as_ref().and_then(|p| p.selected_node());
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
        }
    }

    /// Sort the list (or the person's contacts) by the next column, or reverse the sort.
    fn sort_by(&mut self, m: &Model, action: Action) {
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

    /// Flag, note (prompts) or the next follow-up state of the person the action applies to.
    fn person_state(&mut self, m: &Model, action: Action) {
        match action {
            Action::Flag if self.target(m).is_some() => {
                self.input = Some(Input {
                    purpose: Purpose::Flag,
                    text: String::new(),
                });
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
            _ => {}
        }
    }

    /// Typed text in the open prompt: a character, Backspace, Enter or Esc.
    fn edit_prompt(&mut self, m: &Model, action: Action) {
        let Some(input) = &mut self.input else {
            return;
        };
        match action {
            Action::Cancel => {
                self.input = None;
                return;
            }
            Action::Submit => {
                let input = self.input.take().expect("input open");
                self.commit(m, input);
                return;
            }
            Action::Erase => {
                input.text.pop();
            }
            Action::Type(c) if !c.is_control() => {
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
        let Some(l) = m.listed() else { return };
        if self.row_of.len() != l.list.ranked.len() {
            self.row_of.clear();
            self.row_of.resize(l.list.ranked.len(), u32::MAX);
            for (p, &i) in self.rows.iter().enumerate() {
                self.row_of[i as usize] = p as u32;
            }
        }
        let found = match rank_of(m, text) {
            Some(i) => Some(self.row_of[i as usize]).filter(|&p| p != u32::MAX),
            None => {
                // IDs in text order: binary search for the prefix, then the first one shown.
                let ids = &m.d.ids;
                let name = |i: u32| ids.name(l.list.ranked[i as usize].node);
                let start = l.by_id.partition_point(|&i| name(i) < text);
                let sorted = l
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

    pub(super) fn commit(&mut self, m: &Model, input: Input) {
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
            Purpose::Figure => {
                let path = PathBuf::from(input.text.trim());
                match self.export_figure(m, &path) {
                    Ok(name) => self.say(
                        format!("wrote the {name} figure to {}", path.display()),
                        false,
                    ),
                    Err(e) => self.say(format!("figure not written: {e}"), true),
                }
            }
        }
    }
}
