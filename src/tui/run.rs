//! The run loop: set up the terminal (with a panic hook that restores it), draw, read keys,
//! and restore the terminal however the loop ends — a quit, an error, a panic, or a signal
//! (SIGTERM, SIGHUP, SIGINT, SIGQUIT), after which unsaved changes are written to a
//! recovery file beside the case.

use std::io;
use std::path::PathBuf;
use std::process::ExitCode;
use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::Arc;
use std::time::Duration;

use crossterm::event::{self, Event, KeyEventKind};
use ratatui::DefaultTerminal;

use crate::files::{recover, toml_keep};
use crate::tui::app::App;
use crate::tui::view;

/// The signals that stop the screen (with a recovery file when there are unsaved changes).
const STOPPING: [i32; 4] = [
    signal_hook::consts::SIGTERM,
    signal_hook::consts::SIGHUP,
    signal_hook::consts::SIGINT,
    signal_hook::consts::SIGQUIT,
];

/// How the screen ended.
#[derive(Debug)]
pub enum Ended {
    /// The user quit.
    Quit,
    /// A signal stopped it; the unsaved changes went to the recovery file (or could not).
    Signal {
        /// The signal's number.
        signal: i32,
        /// Where the changes went, or why they could not be written; `None`: nothing unsaved.
        recovery: Option<Result<PathBuf, String>>,
    },
}

/// Run the UI on the real terminal until the user quits or a signal stops it.
///
/// # Errors
/// The terminal cannot be drawn to or read from; the terminal is restored first.
pub fn run(app: App) -> io::Result<Ended> {
    let caught = Arc::new(AtomicUsize::new(0));
    for sig in STOPPING {
        signal_hook::flag::register_usize(sig, Arc::clone(&caught), sig as usize)?;
    }
    watchdog(Arc::clone(&caught));
    // `init` installs a panic hook that restores the terminal before the panic is reported.
    let terminal = ratatui::init();
    let result = run_loop(terminal, app, &caught);
    ratatui::restore();
    result
}

/// How long the screen has to stop by itself after a signal.
const GRACE: Duration = Duration::from_secs(3);

/// After a signal the loop stops within a fraction of a second and writes the recovery file.
/// When the terminal has gone (a closed window sends SIGHUP), reading it can block inside the
/// terminal library for good and the loop never looks at the signal again: this thread then
/// ends the process after `GRACE`, so a screen without a terminal never lingers or spins.
fn watchdog(caught: Arc<AtomicUsize>) {
    std::thread::spawn(move || loop {
        std::thread::sleep(Duration::from_millis(200));
        let signal = caught.load(Ordering::SeqCst);
        if signal != 0 {
            std::thread::sleep(GRACE);
            std::process::exit(128 + i32::try_from(signal).unwrap_or(0));
        }
    });
}

fn run_loop(
    mut terminal: DefaultTerminal,
    mut app: App,
    caught: &AtomicUsize,
) -> io::Result<Ended> {
    while !app.should_quit() {
        let signal = caught.load(Ordering::SeqCst);
        if signal != 0 {
            return Ok(Ended::Signal {
                signal: signal as i32,
                recovery: keep_unsaved(&app),
            });
        }
        // The keys look at the size too: nothing acts on a screen that is not drawn.
        let size = terminal.size()?;
        app.window = Some((size.width, size.height));
        terminal.draw(|frame| view::draw(&app, frame))?;
        // Wake up now and then to notice a signal.
        match event::poll(Duration::from_millis(200)) {
            Ok(false) => continue,
            Ok(true) => {}
            Err(e) if e.kind() == io::ErrorKind::Interrupted => continue,
            Err(e) => return Err(e),
        }
        match event::read() {
            Ok(Event::Key(key)) if key.kind == KeyEventKind::Press => app.handle_key(key),
            // The next pass through the loop redraws at the new size.
            Ok(_) => {}
            Err(e) if e.kind() == io::ErrorKind::Interrupted => {}
            Err(e) => return Err(e),
        }
    }
    Ok(Ended::Quit)
}

/// Write the unsaved case to its recovery file; `None` when nothing is unsaved.
pub fn keep_unsaved(app: &App) -> Option<Result<PathBuf, String>> {
    if !app.dirty {
        return None;
    }
    let text = toml_keep::render(&app.file, app.source_text.as_deref());
    Some(text.and_then(|t| recover::write(app.path.as_deref(), &t).map_err(|e| e.to_string())))
}

/// One line on standard error, every control character made visible; a failure to write
/// there is ignored (there is nowhere left to say it; the exit status still tells).
macro_rules! say {
    ($($arg:tt)*) => {{
        use std::io::Write as _;
        let line = crate::core::text::printable(&format!($($arg)*)).to_string();
        let _ = writeln!(std::io::stderr().lock(), "{line}");
    }};
}

/// Run the bedside screen and turn how it ended into the exit status, or say in one line
/// why it cannot run (no terminal).
pub fn screen(app: impl FnOnce() -> App) -> ExitCode {
    use std::io::IsTerminal;
    if !io::stdout().is_terminal() {
        say!("ebb: the bedside screen needs a terminal; for printed figures use `ebb report CASE.toml` or `ebb report --demo`");
        return ExitCode::from(2);
    }
    match run(app()) {
        Ok(Ended::Quit) => ExitCode::SUCCESS,
        Ok(Ended::Signal { signal, recovery }) => {
            match recovery {
                None => say!("ebb: stopped by signal {signal}; nothing was unsaved"),
                Some(Ok(p)) => say!(
                    "ebb: stopped by signal {signal}; the unsaved changes are in {} (offered when the case is next opened)",
                    p.display()
                ),
                Some(Err(e)) => {
                    say!("ebb: stopped by signal {signal}; the unsaved changes could not be kept: {e}")
                }
            }
            ExitCode::from(128u8.saturating_add(u8::try_from(signal).unwrap_or(0)))
        }
        Err(e) => {
            say!("ebb: the terminal failed: {e}");
            ExitCode::from(2)
        }
    }
}
