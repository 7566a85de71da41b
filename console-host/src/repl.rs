//! The interactive `mwctl talk` on a terminal: a line editor with history (kept in the
//! user's data directory), completion of request words and keys from the controller's
//! own `help`, inline help (`?`, `? COMMAND`); Ctrl-C sends `stop` first (at once, even
//! while a list streams), then leaves.

use crate::error::{CliError, CliResult};
use crate::link::session::{Event, Session};
use crate::link::wire::Wire;
use rustyline::completion::{Completer, Pair};
use rustyline::error::ReadlineError;
use rustyline::history::DefaultHistory;
use rustyline::{Context, Editor, Helper, Highlighter, Hinter, Validator};
use std::collections::BTreeMap;
use std::io::Write;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;

/// The controller's commands as its `help` lists them: usage line and the words it
/// takes (`key` for `key=…`).
#[derive(Clone, Debug, Default)]
pub struct Vocabulary {
    /// Command → (usage text, keys).
    pub commands: BTreeMap<String, (String, Vec<String>)>,
}

impl Vocabulary {
    /// Reads `help` items (`- cmd=NAME usage… keys…`).
    pub fn from_help(items: &[String]) -> Vocabulary {
        let mut commands = BTreeMap::new();
        for l in items {
            let Some(rest) = l.strip_prefix("- cmd=") else {
                continue;
            };
            let (name, usage) = rest.split_once(' ').unwrap_or((rest, ""));
            let ident = |k: &str| {
                k.bytes().next().is_some_and(|b| b.is_ascii_lowercase())
                    && k.bytes()
                        .all(|b| b.is_ascii_lowercase() || b == b'_' || b.is_ascii_digit())
            };
            let mut keys: Vec<String> = Vec::new();
            let mut add = |k: &str| {
                if ident(k) && k != "key" && !keys.iter().any(|x| x == k) {
                    keys.push(k.to_string());
                }
            };
            // `key=…` forms of the usage.
            for w in usage.split(|c: char| c.is_whitespace() || "[]|".contains(c)) {
                if let Some((k, _)) = w.split_once('=') {
                    add(k);
                }
            }
            // Commands that take any of a table's keys (`key=value …`) list them after
            // the usage's colon.
            if usage.contains("key=value") {
                if let Some((_, list)) = usage.rsplit_once(':') {
                    list.split_whitespace().for_each(&mut add);
                }
            }
            commands.insert(name.to_string(), (usage.to_string(), keys));
        }
        Vocabulary { commands }
    }

    /// Completions of the word ending at the end of `line`.
    pub fn complete(&self, line: &str) -> (usize, Vec<String>) {
        let start = line.rfind(' ').map_or(0, |i| i + 1);
        let word = &line[start..];
        let first = line[..start].split_whitespace().next();
        let out = match first {
            None => self
                .commands
                .keys()
                .filter(|c| c.starts_with(word))
                .map(|c| format!("{c} "))
                .collect(),
            Some(cmd) => self
                .commands
                .get(cmd)
                .map(|(_, keys)| {
                    keys.iter()
                        .filter(|k| k.starts_with(word))
                        .map(|k| format!("{k}="))
                        .collect()
                })
                .unwrap_or_default(),
        };
        (start, out)
    }

    /// The inline help for `? [COMMAND]`.
    pub fn help(&self, what: &str) -> String {
        match self.commands.get(what.trim()) {
            Some((usage, _)) => format!("{}: {usage}", what.trim()),
            None => format!(
                "commands: {} (? COMMAND for one; Tab completes words and keys)",
                self.commands.keys().cloned().collect::<Vec<_>>().join(" ")
            ),
        }
    }
}

#[derive(Helper, Highlighter, Hinter, Validator)]
struct Words(Vocabulary);

impl Completer for Words {
    type Candidate = Pair;
    fn complete(
        &self,
        line: &str,
        pos: usize,
        _ctx: &Context<'_>,
    ) -> rustyline::Result<(usize, Vec<Pair>)> {
        let (start, words) = self.0.complete(&line[..pos]);
        Ok((
            start,
            words
                .into_iter()
                .map(|w| Pair {
                    display: w.clone(),
                    replacement: w,
                })
                .collect(),
        ))
    }
}

/// Where the history is kept: `$XDG_DATA_HOME/matterwave/talk_history`, else
/// `~/.local/share/matterwave/talk_history`.
pub fn history_path() -> Option<std::path::PathBuf> {
    let base = std::env::var_os("XDG_DATA_HOME")
        .filter(|v| !v.is_empty())
        .map(std::path::PathBuf::from)
        .or_else(|| {
            std::env::var_os("HOME").map(|h| std::path::PathBuf::from(h).join(".local/share"))
        })?;
    Some(base.join("matterwave").join("talk_history"))
}

/// Runs the interactive session on `s`.
pub fn run<W: Wire>(s: &mut Session<W>, name: &str) -> CliResult<u64> {
    let help = s
        .request("help")
        .map_err(|e| CliError::new(format!("talk: {e}")))?;
    let vocab = Vocabulary::from_help(&help.items);
    let mut ed: Editor<Words, DefaultHistory> =
        Editor::new().map_err(|e| CliError::new(format!("talk: no line editor: {e}")))?;
    ed.set_helper(Some(Words(vocab.clone())));
    let hist = history_path();
    if let Some(h) = &hist {
        let _ = ed.load_history(h);
    }
    // Ctrl-C while a request runs: the session sends `stop` at once, then we leave.
    let leave = Arc::new(AtomicBool::new(false));
    {
        let (flag, leave) = (s.stop_flag.clone(), leave.clone());
        let _ = ctrlc::set_handler(move || {
            flag.store(true, Ordering::SeqCst);
            leave.store(true, Ordering::SeqCst);
        });
    }
    let mut out = std::io::stdout();
    let _ = writeln!(out, "{}\n", crate::cli::CAUTIONS);
    let _ = writeln!(
        out,
        "matterwave controller on {name}: type requests (? lists them, Tab completes); Ctrl-C stops motion and leaves; quit, exit or Ctrl-D ends."
    );
    let mut failed = 0u64;
    loop {
        let line = match ed.readline("mw> ") {
            Ok(l) => l,
            Err(ReadlineError::Interrupted) => {
                // Ctrl-C at the prompt: stop first, then leave.
                if let Ok(r) = s.request("stop") {
                    let _ = writeln!(out, "{}", r.last);
                }
                break;
            }
            Err(ReadlineError::Eof) => break,
            Err(e) => return Err(CliError::new(format!("talk: {e}"))),
        };
        let req = line.trim();
        if req.is_empty() {
            continue;
        }
        let _ = ed.add_history_entry(req);
        if matches!(req, "quit" | "exit") {
            break;
        }
        if let Some(what) = req.strip_prefix('?') {
            let _ = writeln!(out, "{}", vocab.help(what));
            continue;
        }
        let r = s.request_with(req, |ev| {
            let _ = match ev {
                Event::Item(i) => writeln!(std::io::stdout(), "{i}"),
                Event::Retry(why) => writeln!(std::io::stdout(), "# mwctl: {why}; asking again"),
            };
        });
        match r {
            Ok(r) => {
                let _ = writeln!(out, "{}", r.last);
                failed += u64::from(!r.ok());
                if let Some(st) = r.stopped {
                    let _ = writeln!(out, "{st}");
                }
            }
            Err(e) => {
                let _ = writeln!(out, "mwctl: {e}");
                failed += 1;
            }
        }
        if leave.load(Ordering::SeqCst) {
            break;
        }
    }
    if let Some(h) = &hist {
        if let Some(dir) = h.parent() {
            let _ = std::fs::create_dir_all(dir);
        }
        let _ = ed.save_history(h);
    }
    Ok(failed)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_vocabulary_comes_from_the_controllers_help() {
        let mut s = Session::new(crate::link::wire::SimWire::new().expect("simulator"));
        let help = s.request("help").expect("help");
        let v = Vocabulary::from_help(&help.items);
        assert!(v.commands.contains_key("set") && v.commands.contains_key("move"));
        let (start, c) = v.complete("he");
        assert_eq!(
            (start, c),
            (0, vec!["hello ".to_string(), "help ".to_string()])
        );
        let (start, c) = v.complete("set ene");
        assert_eq!((start, c), (4, vec!["energy=".to_string()]));
        let (_, c) = v.complete("move ar");
        assert_eq!(c, vec!["arm=".to_string()]);
        assert!(v.help("move").starts_with("move: "), "{}", v.help("move"));
    }
}
