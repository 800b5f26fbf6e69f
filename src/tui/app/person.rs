//! The Person pane's view: one person's attributes, score parts, workspace state and history,
//! and their contacts with the pair's dates, minutes and settings; the walk from contact to
//! contact.

use petgraph::visit::EdgeRef;

use super::{App, ContactRow, ContactSort, ListPos, PersonView};
use crate::tui::keys::Pane;
use crate::tui::model::Model;
use crate::tui::state::sort_contacts;
use crate::workspace::Workspace;

impl App {
    /// One contact `w` of `node`, over pair `ei`.
    fn contact_row(&self, m: &Model, node: u32, w: u32, ei: usize) -> ContactRow {
        let d = &m.d;
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
            .map(|e| self.contact_row(m, node, e.target(), *e.weight() as usize))
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
    pub(super) fn show_person(
        &mut self,
        m: &Model,
        node: u32,
        pos: ListPos,
        sort: (ContactSort, bool),
    ) {
        let mut v = self.person_view(m, node, sort);
        v.pos = pos;
        self.person = Some(v);
    }

    pub(super) fn open_person(&mut self, m: &Model, node: u32, push: bool) {
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
}
