//! The run loop: set up the terminal (with a panic hook that restores it), draw, read keys,
//! and restore the terminal however the loop ends.

use std::io;

use crossterm::event::{self, Event, KeyEventKind};
use ratatui::DefaultTerminal;

use crate::tui::app::App;
use crate::tui::view;

/// Run the UI on the real terminal until the user quits.
///
/// # Errors
/// The terminal cannot be drawn to or read from; the terminal is restored first.
pub fn run(app: App) -> io::Result<()> {
    // `init` installs a panic hook that restores the terminal before the panic is reported.
    let terminal = ratatui::init();
    let result = run_loop(terminal, app);
    ratatui::restore();
    result
}

fn run_loop(mut terminal: DefaultTerminal, mut app: App) -> io::Result<()> {
    while !app.should_quit() {
        // The keys look at the size too: nothing acts on a screen that is not drawn.
        let size = terminal.size()?;
        app.window = Some((size.width, size.height));
        terminal.draw(|frame| view::draw(&app, frame))?;
        match event::read()? {
            Event::Key(key) if key.kind == KeyEventKind::Press => app.handle_key(key),
            // The next pass through the loop redraws at the new size.
            Event::Resize(_, _) => {}
            _ => {}
        }
    }
    Ok(())
}
