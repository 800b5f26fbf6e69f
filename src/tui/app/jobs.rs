//! Background work of the dashboard: the Degrees and Neighbours figures of a large filtered set,
//! and today's counts after a follow-up change, computed on a worker thread, so that the key
//! returns at once.

use super::{App, Filters};
use crate::analysis::daywork::today_now;
use crate::tui::model::{scope_stats, Model};

impl App {
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
        // Filters are set only once the list is there (the keys wait for it).
        let nodes_of = |m: &Model, rows: &[u32]| -> Vec<u32> {
            m.listed().map_or_else(Vec::new, |l| {
                rows.iter()
                    .map(|&i| l.list.ranked[i as usize].node)
                    .collect()
            })
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

    /// Count today's work again with the workspace as it is now (after a follow-up change):
    /// on a worker in the terminal, at once otherwise (tests).
    pub fn recount_today(&mut self, m: &Model) {
        let Some(l) = m.listed() else { return };
        let path = self.workspace_path.clone();
        match &self.shared {
            Some(shared) => {
                let (tx, rx) = std::sync::mpsc::channel();
                let shared = std::sync::Arc::clone(shared);
                std::thread::spawn(move || {
                    let dues = shared.listed().map_or(&[][..], |l| &l.dues);
                    let t = today_now(&shared.d, dues, &path).map_err(|e| e.to_string());
                    let _ = tx.send(t);
                });
                self.today_pending = Some(rx);
            }
            None => match today_now(&m.d, &l.dues, &path) {
                Ok(t) => self.today_now = Some(t),
                Err(e) => self.say(format!("today's counts: {e}"), true),
            },
        }
    }

    /// Take finished background work; true when something arrived (redraw).
    pub fn poll_jobs(&mut self, m: &Model) -> bool {
        let mut arrived = false;
        if let Some(rx) = &self.today_pending {
            match rx.try_recv() {
                Ok(Ok(t)) => {
                    self.today_now = Some(t);
                    self.today_pending = None;
                    arrived = true;
                }
                Ok(Err(e)) => {
                    self.today_pending = None;
                    self.say(format!("today's counts: {e}"), true);
                    arrived = true;
                }
                Err(std::sync::mpsc::TryRecvError::Empty) => {}
                Err(std::sync::mpsc::TryRecvError::Disconnected) => self.today_pending = None,
            }
        }
        let Some((filters, rx)) = &self.scope_pending else {
            return arrived;
        };
        match rx.try_recv() {
            Ok(s) => {
                if *filters == self.filters {
                    self.scope = Some(s);
                }
                self.scope_pending = None;
                self.refresh_views(m);
                true
            }
            Err(std::sync::mpsc::TryRecvError::Empty) => arrived,
            Err(std::sync::mpsc::TryRecvError::Disconnected) => {
                self.scope_pending = None;
                self.say("the filtered figures could not be computed", true);
                true
            }
        }
    }
}
