//! Runs every `session` example of docs/PROTOCOL.md through the in-process simulator
//! (the core's console on simulated axes) and compares every reply line, so the
//! protocol reference cannot drift from the code.

use matterwave_console::talk::{exchange, sim_console};

const DOC: &str = include_str!("../../docs/PROTOCOL.md");

#[test]
fn every_protocol_example_runs_as_documented() {
    let mut in_block = false;
    let mut blocks: Vec<Vec<&str>> = Vec::new();
    for line in DOC.lines() {
        if line.trim_start().starts_with("```") {
            if in_block {
                in_block = false;
            } else if line.trim() == "```session" {
                in_block = true;
                blocks.push(Vec::new());
            }
            continue;
        }
        if in_block {
            if let Some(b) = blocks.last_mut() {
                b.push(line);
            }
        }
    }
    assert!(
        blocks.len() >= 10,
        "expected the reference's examples, found {}",
        blocks.len()
    );
    let mut requests = 0;
    for (n, block) in blocks.iter().enumerate() {
        // Each block starts from a fresh controller.
        let mut console = sim_console().expect("simulator starts");
        let mut expected: Vec<String> = Vec::new();
        let mut got: Vec<String> = Vec::new();
        for line in block {
            if let Some(req) = line.strip_prefix("> ") {
                got.extend(exchange(&mut console, req));
                requests += 1;
            } else if let Some(rep) = line.strip_prefix("< ") {
                expected.push(rep.to_string());
            } else {
                assert!(
                    line.trim().is_empty(),
                    "block {n}: line neither '> ' nor '< ': {line}"
                );
            }
        }
        assert_eq!(got, expected, "docs/PROTOCOL.md example block {n} differs");
    }
    assert!(requests >= 30);
}

#[test]
fn every_command_is_documented() {
    for (cmd, _) in matterwave_core::console::controller::COMMANDS {
        assert!(
            DOC.contains(&format!("`{cmd}")),
            "docs/PROTOCOL.md lacks {cmd}"
        );
    }
    for code in [
        101u16, 102, 103, 104, 110, 111, 112, 113, 115, 116, 201, 301, 302, 303, 304, 305, 320,
        321, 322, 323, 400, 401, 402, 403, 404, 405, 406, 407, 408, 409, 410, 411, 412, 413,
    ] {
        assert!(
            DOC.contains(&format!("| {code} |")),
            "error table lacks {code}"
        );
    }
}
