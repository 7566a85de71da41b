//! The interactive `mwctl talk`, run in a real terminal: a pseudo-terminal is its
//! controlling terminal (`setsid --ctty`), keystrokes are typed into the master side.
//! Checked: completion from the controller's help, inline help, a request and its
//! reply, the history file, and Ctrl-C — at the prompt and in the middle of a stream —
//! sending `stop` before leaving.

use serialport::{SerialPort as _, TTYPort};
use std::io::{Read, Write};
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

struct Term {
    master: TTYPort,
    child: std::process::Child,
    seen: String,
    /// Where the next `expect` looks from: just after the last match.
    pos: usize,
}

impl Term {
    fn start(home: &std::path::Path) -> Term {
        let (master, slave) = TTYPort::pair().expect("a pseudo-terminal");
        let path = slave.name().expect("pty name");
        let open = || {
            std::fs::OpenOptions::new()
                .read(true)
                .write(true)
                .open(&path)
                .expect("open the terminal side")
        };
        // A terminal as a shell leaves it (pair() makes it raw): line discipline, echo,
        // signals from ^C.
        let ok = Command::new("stty")
            .args(["-F", &path, "sane"])
            .status()
            .expect("stty runs");
        assert!(ok.success(), "stty sane {path}");
        let child = Command::new("setsid")
            .arg("--ctty")
            .arg(env!("CARGO_BIN_EXE_mwctl"))
            .arg("talk")
            .env("XDG_DATA_HOME", home)
            .env("TERM", "xterm")
            .stdin(Stdio::from(open()))
            .stdout(Stdio::from(open()))
            .stderr(Stdio::from(open()))
            .spawn()
            .expect("mwctl talk starts");
        drop(slave);
        Term {
            master,
            child,
            seen: String::new(),
            pos: 0,
        }
    }

    /// Reads until `want` appears after the last match (or 10 s pass); returns what
    /// came from there to the end of the match.
    fn expect(&mut self, want: &str) -> String {
        let start = self.pos;
        let deadline = Instant::now() + Duration::from_secs(10);
        let mut buf = [0u8; 4096];
        loop {
            if let Some(i) = self.seen[start..].find(want) {
                self.pos = start + i + want.len();
                return self.seen[start..self.pos].to_string();
            }
            assert!(
                Instant::now() < deadline,
                "waited for {want:?}, saw {:?}",
                &self.seen[start..]
            );
            match self.master.read(&mut buf) {
                Ok(n) => self.seen.push_str(&String::from_utf8_lossy(&buf[..n])),
                Err(e) if e.kind() == std::io::ErrorKind::TimedOut => {}
                Err(e) => panic!("terminal: {e}; saw {:?}", &self.seen[start..]),
            }
        }
    }

    fn type_(&mut self, keys: &[u8]) {
        self.master.write_all(keys).expect("typed");
        self.master.flush().expect("flushed");
    }

    fn wait(mut self) -> i32 {
        let deadline = Instant::now() + Duration::from_secs(10);
        loop {
            if let Some(st) = self.child.try_wait().expect("wait") {
                return st.code().unwrap_or(-1);
            }
            assert!(Instant::now() < deadline, "mwctl talk did not leave");
            std::thread::sleep(Duration::from_millis(20));
        }
    }
}

fn home(name: &str) -> std::path::PathBuf {
    let d = std::env::temp_dir().join(format!("mwctl-repl-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).expect("data dir");
    d
}

#[test]
fn completion_help_history_and_ctrl_c_at_the_prompt() {
    let h = home("prompt");
    let mut t = Term::start(&h);
    t.expect("mw> ");
    // Tab completes the command word from the controller's own help.
    t.type_(b"hell\t\r");
    t.expect("ok name=matterwave");
    t.expect("mw> ");
    t.type_(b"set ene\t120\r");
    t.expect("ok");
    t.type_(b"? move\r");
    t.expect("move: move sol=N");
    t.type_(b"get energy\r");
    t.expect("ok energy=120");
    t.expect("mw> ");
    // Ctrl-C at the prompt: stop first, then leave.
    t.type_(b"\x03");
    t.expect("ok stopped=motion");
    assert_eq!(t.wait(), 0);
    let hist = std::fs::read_to_string(h.join("matterwave/talk_history")).expect("history kept");
    assert!(
        hist.contains("get energy") && hist.contains("set energy=120"),
        "{hist}"
    );
}

#[test]
fn ctrl_c_in_the_middle_of_a_stream_stops_it_then_leaves() {
    let h = home("stream");
    let mut t = Term::start(&h);
    t.expect("mw> ");
    // A long plan: 60,001 points.
    t.type_(b"plan kind=sweep from=-150 to=150 step=0.005\r");
    t.expect("- i=2");
    t.type_(b"\x03");
    let rest = t.expect("ok stopped=stream");
    assert!(rest.contains("err 411"), "{rest}");
    // The plan was answered err 411 (aborted): a session with a failed request exits 2.
    assert_eq!(t.wait(), 2);
}
