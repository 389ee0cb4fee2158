//! End to end: the real `ebb` binary driven in a tmux session (skipped, with a note, when
//! tmux is not installed). The k read off the screen must be the core's k for the same case.

use std::path::Path;
use std::process::Command;
use std::time::{Duration, Instant};

use ebb::core::casefile::CaseFile;
use ebb::core::report::{self, num};

struct Session {
    socket: String,
    name: String,
}

impl Session {
    fn start(tag: &str, cwd: &Path, command: &str) -> Option<Session> {
        let socket = format!("ebb-test-{tag}-{}", std::process::id());
        let name = "ebb".to_string();
        let ok = Command::new("tmux")
            .args([
                "-L",
                &socket,
                "new-session",
                "-d",
                "-x",
                "120",
                "-y",
                "40",
                "-s",
                &name,
            ])
            .arg("-c")
            .arg(cwd)
            .arg(command)
            .status()
            .ok()?
            .success();
        ok.then_some(Session { socket, name })
    }

    fn keys(&self, keys: &[&str]) {
        let status = Command::new("tmux")
            .args(["-L", &self.socket, "send-keys", "-t", &self.name])
            .args(keys)
            .status()
            .unwrap();
        assert!(status.success());
    }

    fn text(&self, text: &str) {
        let status = Command::new("tmux")
            .args([
                "-L",
                &self.socket,
                "send-keys",
                "-t",
                &self.name,
                "-l",
                text,
            ])
            .status()
            .unwrap();
        assert!(status.success());
    }

    fn screen(&self) -> String {
        let out = Command::new("tmux")
            .args(["-L", &self.socket, "capture-pane", "-p", "-t", &self.name])
            .output()
            .unwrap();
        String::from_utf8_lossy(&out.stdout).into_owned()
    }

    /// Wait until the screen shows `what` (the UI redraws after every key).
    fn wait_for(&self, what: &str) -> String {
        let start = Instant::now();
        loop {
            let s = self.screen();
            if s.contains(what) {
                return s;
            }
            assert!(
                start.elapsed() < Duration::from_secs(20),
                "timed out waiting for {what:?}; screen:\n{s}"
            );
            std::thread::sleep(Duration::from_millis(50));
        }
    }

    fn alive(&self) -> bool {
        Command::new("tmux")
            .args(["-L", &self.socket, "has-session", "-t", &self.name])
            .stderr(std::process::Stdio::null())
            .status()
            .map(|s| s.success())
            .unwrap_or(false)
    }

    fn wait_gone(&self) {
        let start = Instant::now();
        while self.alive() {
            assert!(
                start.elapsed() < Duration::from_secs(20),
                "ebb did not quit"
            );
            std::thread::sleep(Duration::from_millis(50));
        }
    }
}

impl Drop for Session {
    fn drop(&mut self) {
        let _ = Command::new("tmux")
            .args(["-L", &self.socket, "kill-server"])
            .stderr(std::process::Stdio::null())
            .status();
    }
}

fn tmux_present() -> bool {
    let found = Command::new("tmux")
        .arg("-V")
        .output()
        .map(|o| o.status.success())
        .unwrap_or(false);
    if !found {
        println!("note: tmux is not installed; the end-to-end test is skipped");
    }
    found
}

/// The `k ... /h` figure on the fit screen.
fn k_on_screen(screen: &str) -> String {
    let line = screen
        .lines()
        .find_map(|l| {
            let at = l.find(" k  ")?;
            Some(l[at..].to_string())
        })
        .unwrap_or_else(|| panic!("no k on the screen:\n{screen}"));
    line.split_whitespace().nth(1).unwrap().to_string()
}

fn core_k(toml: &str) -> String {
    let case = CaseFile::parse(toml).unwrap().validate().unwrap();
    num(report::build(&case).unwrap().fit.k_per_h)
}

#[test]
fn the_demo_shows_the_cores_k_and_quits() {
    if !tmux_present() {
        return;
    }
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let bin = env!("CARGO_BIN_EXE_ebb");
    let s = Session::start("demo", dir, &format!("{bin} demo")).expect("tmux session");
    s.wait_for("CAUTION");
    s.keys(&["2"]);
    let screen = s.wait_for("[2 Fit]");
    assert!(screen.contains("CAUTION"));
    assert_eq!(k_on_screen(&screen), core_k(ebb::demo::DEMO_CASE));
    s.keys(&["q"]);
    s.wait_gone();
}

#[test]
fn two_levels_typed_into_a_new_case_give_k() {
    if !tmux_present() {
        return;
    }
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let bin = env!("CARGO_BIN_EXE_ebb");
    let s = Session::start("new", dir, bin).expect("tmux session");
    s.wait_for("CAUTION");
    let clear = ["End"; 1]
        .iter()
        .chain(["BSpace"; 30].iter())
        .copied()
        .collect::<Vec<_>>();
    // The cursor starts on "add a dose": add one, time then amount.
    s.keys(&["a"]);
    s.wait_for("New dose");
    s.keys(&clear);
    s.text("2027-03-02 08:00");
    s.keys(&["Enter"]);
    s.keys(&clear);
    s.text("400");
    s.keys(&["Enter"]);
    // Then its infusion time; the finished row waits on "+ add a dose" for Enter.
    s.text("0.5");
    s.keys(&["Enter"]);
    s.wait_for("Dose 1 added");
    s.keys(&["Enter"]);
    s.wait_for("400 mg");
    // One ↓ from "add a dose" is "add a level"; after a level the cursor waits there.
    for (time, value, downs) in [("2027-03-02 10:00", "20", 1), ("2027-03-02 16:00", "10", 0)] {
        for _ in 0..downs {
            s.keys(&["Down"]);
        }
        s.keys(&["a"]);
        s.wait_for("New level");
        s.keys(&clear);
        s.text(time);
        s.keys(&["Enter"]);
        s.keys(&clear);
        s.text(value);
        s.keys(&["Enter"]);
        // No note; then Enter on the finished row.
        s.keys(&["Enter"]);
        s.wait_for("added");
        s.keys(&["Enter"]);
        s.wait_for(&format!("{}  {value} ", &time[..16]));
    }
    // With two levels the case screen already shows the fit in one line.
    s.wait_for("half-life");
    s.keys(&["2"]);
    let screen = s.wait_for("[2 Fit]");
    let expected = core_k(
        "[drug]\nlevel_unit = \"mg/L\"\n\
         [[dose]]\ntime = 2027-03-02T08:00:00\namount_mg = 400.0\nroute = \"infusion\"\ninfusion_h = 0.5\n\
         [[level]]\ntime = 2027-03-02T10:00:00\nvalue = 20.0\n\
         [[level]]\ntime = 2027-03-02T16:00:00\nvalue = 10.0\n",
    );
    assert_eq!(k_on_screen(&screen), expected, "{screen}");
    // Unsaved changes: q asks first; y quits without saving.
    s.keys(&["q"]);
    s.wait_for("Unsaved changes");
    s.keys(&["y"]);
    s.wait_gone();
    assert_eq!(std::fs::read_dir(dir).unwrap().count(), 0, "nothing saved");
}
