//! The Person pane's view: one person's attributes, score parts, workspace state and history,
//! and their contacts with the pair's dates, minutes and settings; the walk from contact to
//! contact.

use petgraph::visit::EdgeRef;

use super::{App, ContactRow, ContactSort, ListPos, PersonView};
use crate::analysis::chains;
use crate::ingest::dates::iso;
use crate::tui::keys::Pane;
use crate::tui::model::Model;
use crate::tui::state::sort_contacts;
use crate::tui::state::{ChainRow, PersonList};
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

    /// The chain list of `node` (forward or backward) and a line saying what it is.
    fn chain_rows(&self, m: &Model, node: u32, list: PersonList) -> (Vec<ChainRow>, String) {
        if list == PersonList::Contacts {
            return (Vec::new(), String::new());
        }
        let w = match m.chain_windows() {
            Ok(w) => w,
            Err(e) => return (Vec::new(), e),
        };
        let d = &m.d;
        let people = m.chain_people();
        let gaps = format!(
            "{}: gaps {}-{} days, {} steps",
            w.pathogen, w.rules.min_gap, w.rules.max_gap, w.rules.generations
        );
        match list {
            PersonList::Forward => {
                let f = chains::forward(d, people, &w, &[node]);
                let rows = f
                    .reached
                    .iter()
                    .map(|r| ChainRow {
                        node: r.node,
                        id: d.ids.name(r.node).to_string(),
                        count: u32::from(r.generation),
                        day: r.earliest,
                        listed: r.listed.word(),
                        contacts: r.degree,
                        via: r
                            .chain
                            .iter()
                            .map(|s| format!("{} {}", d.ids.name(s.from), iso(s.day)))
                            .collect::<Vec<_>>()
                            .join(" > "),
                    })
                    .collect();
                let from = match (
                    people.reference[node as usize],
                    people.is_case[node as usize],
                ) {
                    (Some(r), _) => format!("infectious around {}", iso(r)),
                    (None, true) => {
                        "a case without onset or report date: every dated exposure counts".into()
                    }
                    (None, false) => "no onset date: every dated exposure of theirs counts".into(),
                };
                (
                    rows,
                    format!(
                        "Forward: {} people the dates allow ({from}; {gaps})",
                        f.reached.len()
                    ),
                )
            }
            _ => {
                let b = chains::backward(d, people, &w, &[node]);
                if !b.undated.is_empty() {
                    return (
                        Vec::new(),
                        "Backward: no onset or report date, so no window before onset to search"
                            .into(),
                    );
                }
                let rows = b
                    .sources
                    .iter()
                    .map(|s| ChainRow {
                        node: s.node,
                        id: d.ids.name(s.node).to_string(),
                        count: s.targets.len() as u32,
                        day: s.earliest,
                        listed: s.listed.word(),
                        contacts: s.degree,
                        via: format!("met {}", iso(s.earliest)),
                    })
                    .collect();
                let t = &b.targets[0];
                (
                    rows,
                    format!(
                        "Backward: {} possible sources met {} to {} (infected {}-{} days before onset; {})",
                        b.sources.len(),
                        iso(t.from),
                        iso(t.to),
                        w.infection.0,
                        w.infection.1,
                        w.pathogen
                    ),
                )
            }
        }
    }

    /// Build the view of one person.
    pub fn person_view(
        &self,
        m: &Model,
        node: u32,
        sort: (ContactSort, bool),
        list: PersonList,
    ) -> PersonView {
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
                    .map(|v| (name.clone(), v.to_string()))
            })
            .collect();
        let listed = m.listed();
        let ranked = listed.and_then(|l| {
            l.rank_pos
                .get(node as usize)
                .filter(|&&p| p != u32::MAX)
                .map(|&p| (p as usize + 1, l.list.ranked[p as usize].clone()))
        });
        let parts = ranked
            .as_ref()
            .zip(listed)
            .map(|((_, r), l)| r.parts(&l.list.preset.1))
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
        let (chains, chains_note) = self.chain_rows(m, node, list);
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
            list,
            chains,
            chains_note,
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
        let list = self.person.as_ref().map(|p| p.list).unwrap_or_default();
        let mut v = self.person_view(m, node, sort, list);
        v.pos = pos;
        self.person = Some(v);
    }

    pub(super) fn open_person(&mut self, m: &Model, node: u32, push: bool) {
        if push {
            if let Some(p) = &self.person {
                self.history.push((p.node, p.pos, p.sort));
            }
        }
        let (sort, list) = self
            .person
            .as_ref()
            .map(|p| (p.sort, p.list))
            .unwrap_or(((ContactSort::Degree, true), PersonList::Contacts));
        self.person = Some(self.person_view(m, node, sort, list));
        self.pane = Pane::Person;
    }
}
