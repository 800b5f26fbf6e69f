//! Terminal events to actions: a key press through the key table (or, while a prompt is open,
//! as typed text), a mouse wheel or click, a resize. Nothing here changes the state; `App::act`
//! applies what this returns.

use crossterm::event::{
    Event, KeyCode, KeyEvent, KeyEventKind, MouseButton, MouseEvent, MouseEventKind,
};
use ratatui::layout::Rect;

use super::app::App;
use super::keys::{self, Action, Pane};
use super::ui;

/// Rows the mouse wheel moves per notch.
const WHEEL_ROWS: usize = 3;

/// What the translation depends on.
#[derive(Debug, Clone, Copy)]
pub struct Context {
    /// The pane shown.
    pub pane: Pane,
    /// A prompt is open: keys are typed text.
    pub prompt_open: bool,
    /// The terminal's size (columns, rows), for where a click lands.
    pub size: (u16, u16),
}

impl Context {
    /// The context of the dashboard's state.
    pub fn of(app: &App) -> Context {
        Context {
            pane: app.pane,
            prompt_open: app.input.is_some(),
            size: app.size,
        }
    }
}

/// The actions of one terminal event, in order (often none or one).
pub fn actions(cx: Context, ev: &Event) -> Vec<Action> {
    match ev {
        Event::Key(key) if key.kind != KeyEventKind::Release => key_actions(cx, key),
        Event::Resize(w, h) => vec![Action::Resize(*w, *h)],
        Event::Mouse(mouse) => mouse_actions(cx, mouse),
        _ => Vec::new(),
    }
}

/// A key press: typed text while a prompt is open, else the key table's action.
fn key_actions(cx: Context, key: &KeyEvent) -> Vec<Action> {
    if cx.prompt_open {
        let typed = match key.code {
            KeyCode::Esc => Some(Action::Cancel),
            KeyCode::Enter => Some(Action::Submit),
            KeyCode::Backspace => Some(Action::Erase),
            KeyCode::Char(c) if !c.is_control() => Some(Action::Type(c)),
            _ => None,
        };
        return typed.into_iter().collect();
    }
    keys::lookup(cx.pane, key).into_iter().collect()
}

/// The wheel moves the list; a left click picks a tab or a row of the priority or cluster list.
fn mouse_actions(cx: Context, mouse: &MouseEvent) -> Vec<Action> {
    let a = ui::areas(Rect::new(0, 0, cx.size.0, cx.size.1));
    match mouse.kind {
        MouseEventKind::ScrollDown => vec![Action::Down; WHEEL_ROWS],
        MouseEventKind::ScrollUp => vec![Action::Up; WHEEL_ROWS],
        MouseEventKind::Down(MouseButton::Left) if mouse.row == a.tabs.y => {
            ui::tab_at(mouse.column)
                .map(Action::Go)
                .into_iter()
                .collect()
        }
        MouseEventKind::Down(MouseButton::Left)
            if mouse.row >= a.body.y + 2
                && mouse.row < a.body.bottom()
                && matches!(cx.pane, Pane::Priority | Pane::Clusters) =>
        {
            vec![Action::ClickRow(mouse.row - a.body.y - 2)]
        }
        _ => Vec::new(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crossterm::event::KeyModifiers;

    fn key(code: KeyCode) -> Event {
        Event::Key(KeyEvent::new(code, KeyModifiers::NONE))
    }

    fn click(column: u16, row: u16) -> Event {
        Event::Mouse(MouseEvent {
            kind: MouseEventKind::Down(MouseButton::Left),
            column,
            row,
            modifiers: KeyModifiers::NONE,
        })
    }

    #[test]
    fn keys_typed_text_clicks_and_resizes_become_actions() {
        let mut cx = Context {
            pane: Pane::Overview,
            prompt_open: false,
            size: (120, 40),
        };
        assert_eq!(actions(cx, &key(KeyCode::Char('q'))), vec![Action::Quit]);
        assert_eq!(
            actions(cx, &Event::Resize(90, 30)),
            vec![Action::Resize(90, 30)]
        );
        let a = ui::areas(Rect::new(0, 0, 120, 40));
        // A click on a body row means nothing on the Overview; on the list it picks the row.
        assert_eq!(actions(cx, &click(3, a.body.y + 4)), vec![]);
        cx.pane = Pane::Priority;
        assert_eq!(
            actions(cx, &click(3, a.body.y + 4)),
            vec![Action::ClickRow(2)]
        );
        assert_eq!(actions(cx, &click(3, a.body.y)), vec![]);
        let x = (0..200)
            .find(|&x| ui::tab_at(x) == Some(Pane::Outlook))
            .unwrap();
        assert_eq!(
            actions(cx, &click(x, a.tabs.y)),
            vec![Action::Go(Pane::Outlook)]
        );
        cx.prompt_open = true;
        assert_eq!(
            actions(cx, &key(KeyCode::Char('q'))),
            vec![Action::Type('q')]
        );
        assert_eq!(actions(cx, &key(KeyCode::Enter)), vec![Action::Submit]);
        assert_eq!(actions(cx, &key(KeyCode::Esc)), vec![Action::Cancel]);
        assert_eq!(actions(cx, &key(KeyCode::Backspace)), vec![Action::Erase]);
        assert_eq!(actions(cx, &key(KeyCode::Tab)), vec![]);
    }
}
