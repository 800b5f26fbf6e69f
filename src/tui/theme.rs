//! The palette, in one place. Three themes: dark, light and mono (no colour). Meaning never
//! rests on colour alone: every highlighted state also has a word, a symbol, bold, reverse or
//! underline, so the mono theme (and NO_COLOR, which selects it) loses nothing.

use ratatui::style::{Color, Modifier, Style};

/// Styles used by the draw code.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Theme {
    /// Name as in the configuration.
    pub name: &'static str,
    /// Ordinary text.
    pub text: Style,
    /// Secondary text (labels, units).
    pub dim: Style,
    /// Pane titles and headings.
    pub title: Style,
    /// The selected row or tab.
    pub selected: Style,
    /// Warnings (overdue, caution).
    pub warn: Style,
    /// Good news (below threshold).
    pub good: Style,
    /// Chart series, in order.
    pub series: [Style; 5],
    /// Borders.
    pub border: Style,
}

impl Theme {
    /// The theme named `name` ("dark", "light", "mono"); NO_COLOR set and non-empty forces mono
    /// (see no-color.org: "should prevent the addition of ANSI color").
    pub fn pick(name: &str, no_color: bool) -> Theme {
        if no_color {
            return Theme::mono();
        }
        match name {
            "light" => Theme::light(),
            "mono" => Theme::mono(),
            _ => Theme::dark(),
        }
    }

    /// Light text on a dark background.
    pub fn dark() -> Theme {
        Theme {
            name: "dark",
            text: Style::new().fg(Color::Gray),
            dim: Style::new().fg(Color::DarkGray),
            title: Style::new().fg(Color::Cyan).add_modifier(Modifier::BOLD),
            selected: Style::new()
                .fg(Color::Black)
                .bg(Color::Cyan)
                .add_modifier(Modifier::BOLD),
            warn: Style::new().fg(Color::Yellow).add_modifier(Modifier::BOLD),
            good: Style::new().fg(Color::Green),
            series: [
                Style::new().fg(Color::Cyan),
                Style::new().fg(Color::Yellow),
                Style::new().fg(Color::Magenta),
                Style::new().fg(Color::Green),
                Style::new().fg(Color::Red),
            ],
            border: Style::new().fg(Color::DarkGray),
        }
    }

    /// Dark text on a light background.
    pub fn light() -> Theme {
        Theme {
            name: "light",
            text: Style::new().fg(Color::Black),
            dim: Style::new().fg(Color::DarkGray),
            title: Style::new().fg(Color::Blue).add_modifier(Modifier::BOLD),
            selected: Style::new()
                .fg(Color::White)
                .bg(Color::Blue)
                .add_modifier(Modifier::BOLD),
            warn: Style::new().fg(Color::Red).add_modifier(Modifier::BOLD),
            good: Style::new().fg(Color::Green),
            series: [
                Style::new().fg(Color::Blue),
                Style::new().fg(Color::Red),
                Style::new().fg(Color::Magenta),
                Style::new().fg(Color::Green),
                Style::new().fg(Color::Black),
            ],
            border: Style::new().fg(Color::Gray),
        }
    }

    /// No colour at all.
    pub fn mono() -> Theme {
        let plain = Style::new();
        Theme {
            name: "mono",
            text: plain,
            dim: plain,
            title: plain.add_modifier(Modifier::BOLD),
            selected: plain.add_modifier(Modifier::REVERSED),
            warn: plain.add_modifier(Modifier::BOLD),
            good: plain,
            series: [plain; 5],
            border: plain,
        }
    }
}
