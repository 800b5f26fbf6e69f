//! The prompt's exports: the pane's figure (SVG or PNG) and the priority list as shown.

use super::App;
use crate::analysis::priority::Ranked;
use crate::report::meta::Meta;
use crate::tui::keys::Pane;
use crate::tui::model::Model;
use crate::workspace::PersonState;

impl App {
    /// The file stem of the pane's figure (for the prompt; the figure is drawn on Enter).
    pub(super) fn pane_figure_name(&self, m: &Model) -> &'static str {
        match self.pane {
            Pane::Degrees if self.log_scale => "degree-distribution-loglog",
            Pane::Degrees => "degree-distribution",
            Pane::Neighbours => "neighbour-degree",
            Pane::Outlook if m.plan().is_some_and(|p| p.t.is_some()) => "outlook-reach",
            Pane::Outlook => "outlook-transmissibility",
            _ => "figure",
        }
    }

    /// The figure of the pane shown: the degree distribution (log-log when the pane is), the
    /// neighbour degrees, or the outlook's reach curves (R0 over T while T is unknown). The
    /// whole network's, as in `hubwatch figures`.
    pub fn pane_figure(&self, m: &Model) -> Option<crate::report::figures::Figure> {
        use crate::report::figures as f;
        // The checksums are read on a worker at load; a figure asked for before they are
        // ready waits for them (seconds at most, once).
        let hashes = loop {
            match m.input_hashes.get() {
                Some(Ok(h)) => break h.clone(),
                Some(Err(_)) => break Vec::new(),
                None => std::thread::sleep(std::time::Duration::from_millis(20)),
            }
        };
        let caption = f::caption(
            &m.d,
            Some((m.window.days, m.window.pathogen.as_str())),
            &hashes,
        );
        match self.pane {
            Pane::Degrees => Some(f::degree_distribution(&m.stats, self.log_scale, &caption)),
            Pane::Neighbours => Some(f::neighbour_degree(&m.stats, &caption)),
            Pane::Outlook => {
                let plan = m.plan()?;
                f::outlook_reach(plan, &caption).or_else(|| Some(f::outlook_t(plan, &caption)))
            }
            _ => None,
        }
    }

    /// Write the pane's figure as SVG or PNG (by the extension), privately and atomically; not
    /// over an existing file.
    pub fn export_figure(&self, m: &Model, path: &std::path::Path) -> crate::error::Result<String> {
        use crate::error::Error;
        let fig = self
            .pane_figure(m)
            .ok_or_else(|| Error::Usage("this pane has no figure yet".into()))?;
        if path.exists() {
            return Err(Error::Usage(format!("{} exists", path.display())));
        }
        crate::plot::ensure_font()?;
        let ext = path
            .extension()
            .map(|e| e.to_string_lossy().to_lowercase())
            .unwrap_or_default();
        let bytes = match ext.as_str() {
            "svg" => crate::plot::svg(&fig)?.into_bytes(),
            "png" => crate::plot::png(&fig)?,
            _ => {
                return Err(Error::Usage(
                    "give a file name ending in .svg or .png".into(),
                ))
            }
        };
        crate::export::write_private(path, &bytes)?;
        Ok(fig.name)
    }

    /// Write the priority list as shown (filters and sort) with the export module.
    pub fn export_view(&self, m: &Model, path: &std::path::Path) -> crate::error::Result<usize> {
        let format = crate::export::format_for(path, None)?;
        let l = m
            .listed()
            .ok_or_else(|| crate::error::Error::Usage("the list is not ranked yet".into()))?;
        let ranked: Vec<Ranked> = self
            .rows
            .iter()
            .map(|&i| l.list.ranked[i as usize].clone())
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
            &l.list.preset.1,
            &states,
            0,
            false,
        );
        // The rank column numbers the rows as shown; keep the list's own rank beside it.
        if let Some(c) = table.columns.iter().position(|c| c == "rank") {
            table.columns[c] = "row".into();
            table.columns.insert(c + 1, "rank".into());
            if !table.kinds.is_empty() {
                table.kinds.insert(c + 1, crate::export::Kind::Int);
            }
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
            .ranking(&l.list)
            .with("filters", self.filter_text(m))
            .with("sort", sort)
            .finish();
        crate::export::write(&table, &meta, format, path, false)?;
        Ok(table.rows.len())
    }
}
