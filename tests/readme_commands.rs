//! The README's commands, run verbatim.
//!
//! Rule (also in DEVELOPERS.md, "Testing"): every fenced block of README.md
//! whose info string is `sh` is run, line by line, by `sh` in a scratch
//! copy of `demo-data/` (so the paths of the README work and outputs land in
//! scratch), with a folder holding `apsidal` (the binary built for this
//! test) first on PATH and `cargo run --release --` replaced by `apsidal`.
//! Each command must exit 0. A block is skipped only when the line before
//! its fence is `<!-- not run: REASON -->`; skipped blocks are printed with
//! their reason. Shell blocks under another info string (`bash`, `shell`,
//! `console`, …) are refused, so that no command escapes the rule. Run
//! blocks may hold only `apsidal …` and `cargo run --release -- …`
//! commands. A block marked `<!-- output: CMD -->` is an excerpt of what
//! CMD (run from a `sh` block) prints: each of its lines must be a line of
//! that output. The `rust` block of "Using the crate from Rust" is compiled
//! and run here too, and checked to be the README's text.
//!
//! Unix only: the README's commands are POSIX shell.
#![cfg(unix)]

use std::path::{Path, PathBuf};
use std::process::Command;

/// A fenced block of the README.
#[derive(Debug)]
struct Block {
    /// Line of the opening fence (1-based).
    line: usize,
    /// Info string of the fence.
    info: String,
    /// Reason of a `<!-- not run: … -->` marker before the fence.
    not_run: Option<String>,
    /// Command of an `<!-- output: … -->` marker before the fence.
    output_of: Option<String>,
    /// The lines inside the fence.
    body: Vec<String>,
}

fn readme() -> String {
    std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("README.md")).unwrap()
}

fn blocks(text: &str) -> Vec<Block> {
    let lines: Vec<&str> = text.lines().collect();
    let mut out = Vec::new();
    let mut i = 0;
    while i < lines.len() {
        if let Some(info) = lines[i].trim_start().strip_prefix("```") {
            let marker = |kind: &str| {
                lines[..i]
                    .iter()
                    .rev()
                    .find(|l| !l.trim().is_empty())
                    .and_then(|l| l.trim().strip_prefix("<!--"))
                    .and_then(|l| l.strip_suffix("-->"))
                    .and_then(|l| l.trim().strip_prefix(kind))
                    .map(|r| r.trim().to_string())
            };
            let (not_run, output_of) = (marker("not run:"), marker("output:"));
            let start = i;
            let mut body = Vec::new();
            i += 1;
            while i < lines.len() && !lines[i].trim_start().starts_with("```") {
                body.push(lines[i].to_string());
                i += 1;
            }
            assert!(i < lines.len(), "README.md:{}: unclosed fence", start + 1);
            out.push(Block {
                line: start + 1,
                info: info.trim().to_string(),
                not_run,
                output_of,
                body,
            });
        }
        i += 1;
    }
    out
}

/// The commands of a block: continuation lines joined, comments and
/// blank lines dropped.
fn commands(block: &Block) -> Vec<String> {
    let mut out = Vec::new();
    let mut current = String::new();
    for l in &block.body {
        let l = l.trim();
        if current.is_empty() && (l.is_empty() || l.starts_with('#')) {
            continue;
        }
        if let Some(head) = l.strip_suffix('\\') {
            current += head.trim_end();
            current += " ";
        } else {
            current += l;
            out.push(std::mem::take(&mut current));
        }
    }
    assert!(
        current.is_empty(),
        "README.md:{}: dangling `\\`",
        block.line
    );
    out
}

/// The first non-blank line of an excerpt that is not a line of `stdout`
/// (trailing spaces ignored), if any.
fn stale_line<'a>(excerpt: &'a [String], stdout: &str) -> Option<&'a str> {
    let printed: Vec<&str> = stdout.lines().map(str::trim_end).collect();
    excerpt
        .iter()
        .filter(|l| !l.trim().is_empty())
        .map(|l| l.trim_end())
        .find(|l| !printed.contains(l))
}

fn copy_dir(from: &Path, to: &Path) {
    std::fs::create_dir_all(to).unwrap();
    for e in std::fs::read_dir(from).unwrap() {
        let e = e.unwrap();
        let target = to.join(e.file_name());
        if e.file_type().unwrap().is_dir() {
            copy_dir(&e.path(), &target);
        } else {
            std::fs::copy(e.path(), target).unwrap();
        }
    }
}

/// A scratch folder with `demo-data/` copied in and a `bin/apsidal` link.
fn scratch() -> (PathBuf, PathBuf) {
    let root = std::env::temp_dir().join(format!("apsidal-readme-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&root);
    let work = root.join("work");
    copy_dir(
        &Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data"),
        &work.join("demo-data"),
    );
    let bin = root.join("bin");
    std::fs::create_dir_all(&bin).unwrap();
    std::os::unix::fs::symlink(env!("CARGO_BIN_EXE_apsidal"), bin.join("apsidal")).unwrap();
    (root, work)
}

#[test]
fn readme_shell_blocks_run_verbatim() {
    let text = readme();
    let all = blocks(&text);
    let (root, work) = scratch();
    let path = format!(
        "{}:{}",
        root.join("bin").display(),
        std::env::var("PATH").unwrap_or_default()
    );
    let mut ran = 0;
    let mut outputs: Vec<(String, String)> = Vec::new();
    for b in &all {
        if ["bash", "shell", "console", "zsh", "shell-session"].contains(&b.info.as_str()) {
            panic!(
                "README.md:{}: shell block fenced as `{}`; use `sh` (run by this test) \
                 or mark it <!-- not run: reason -->",
                b.line, b.info
            );
        }
        if b.info != "sh" {
            continue;
        }
        if let Some(reason) = &b.not_run {
            println!("README.md:{}: not run ({reason})", b.line);
            continue;
        }
        for cmd in commands(b) {
            let verbatim = cmd.clone();
            let cmd = match cmd.strip_prefix("cargo run --release -- ") {
                Some(rest) => format!("apsidal {rest}"),
                None => cmd,
            };
            assert!(
                cmd.starts_with("apsidal "),
                "README.md:{}: `{verbatim}` is neither `apsidal …` nor `cargo run --release -- …`; \
                 mark the block <!-- not run: reason --> if it is not meant to run here",
                b.line
            );
            println!("README.md:{}: {verbatim}", b.line);
            let o = Command::new("sh")
                .arg("-c")
                .arg(&cmd)
                .current_dir(&work)
                .env("PATH", &path)
                .output()
                .unwrap();
            assert!(
                o.status.success(),
                "README.md:{}: `{verbatim}` exited {:?}:\n{}",
                b.line,
                o.status.code(),
                String::from_utf8_lossy(&o.stderr)
            );
            outputs.push((verbatim, String::from_utf8_lossy(&o.stdout).into_owned()));
            ran += 1;
        }
    }
    // Output excerpts: every line of a block marked `<!-- output: CMD -->`
    // is a line of what CMD (run above from a `sh` block) printed.
    for b in all.iter().filter(|b| b.output_of.is_some()) {
        let cmd = b.output_of.as_deref().unwrap_or_default();
        let Some((_, stdout)) = outputs
            .iter()
            .find(|(c, _)| c.split('#').next().unwrap().trim() == cmd)
        else {
            panic!(
                "README.md:{}: output of `{cmd}`, which no `sh` block runs",
                b.line
            );
        };
        if let Some(l) = stale_line(&b.body, stdout) {
            panic!(
                "README.md:{}: the excerpt line\n{l}\nis not in the output of `{cmd}`:\n{stdout}",
                b.line
            );
        }
    }
    // The demo command at least (README: "The two commands").
    assert!(ran >= 1, "no README command was run");
    let _ = std::fs::remove_dir_all(&root);
}

#[test]
fn fence_rule_parses_markers_and_continuations() {
    let text = "x\n<!-- not run: a cluster -->\n```sh\napsidal a \\\n  --b c\n# note\n```\n\n```sh\ncargo run --release -- demo  # d\n```\n";
    let b = blocks(text);
    assert_eq!(b.len(), 2);
    assert_eq!(b[0].not_run.as_deref(), Some("a cluster"));
    assert_eq!(b[1].not_run, None);
    assert_eq!(commands(&b[0]), vec!["apsidal a --b c".to_string()]);
    assert_eq!(b[1].line, 9);
    assert_eq!(b[0].output_of, None);
    let c = blocks("<!-- output: apsidal x -->\n```text\nline\n```\n");
    assert_eq!(c[0].output_of.as_deref(), Some("apsidal x"));
    assert_eq!(c[0].not_run, None);
    // An excerpt must match whole lines, indentation included.
    let out = "head\n  sin_i   0.98  \nflag: resonant\n";
    let ok = [
        "  sin_i   0.98".to_string(),
        String::new(),
        "flag: resonant".into(),
    ];
    assert_eq!(stale_line(&ok, out), None);
    let stale = ["flag: resonant".to_string(), "  sin_i   0.97".into()];
    assert_eq!(stale_line(&stale, out), Some("  sin_i   0.97"));
    assert_eq!(
        stale_line(&["sin_i   0.98".to_string()], out),
        Some("sin_i   0.98")
    );
}

// README: begin
fn readme_rust_snippet() -> Result<(), Box<dyn std::error::Error>> {
    use apsidal::config::load_run_file;
    use apsidal::fit::best_fit::FitSettings;
    use apsidal::workflow::fitting::fit_run;

    let run = load_run_file("demo-data/tellan/run.ron")?;
    let data = run.read_data()?;
    let report = fit_run(&run, &data, "run.ron", &FitSettings::default())?;
    for fit in &report.fits {
        println!("{:?}: BIC {:.1}", fit.kind, fit.fit.bic);
    }
    Ok(())
}
// README: end

#[test]
fn readme_rust_block_is_this_code_and_runs() {
    let me = include_str!("readme_commands.rs");
    let begin = me.find("// README: begin\n").unwrap();
    let end = me.find("// README: end\n").unwrap();
    let code: Vec<&str> = me[begin..end].lines().collect();
    // Drop the marker, the fn line and the trailing `Ok(())` and `}`.
    let inner: Vec<String> = code[2..code.len() - 2]
        .iter()
        .map(|l| l.strip_prefix("    ").unwrap_or(l).to_string())
        .collect();
    let text = readme();
    let rust: Vec<Block> = blocks(&text)
        .into_iter()
        .filter(|b| b.info.starts_with("rust"))
        .collect();
    assert_eq!(rust.len(), 1, "one Rust block in the README");
    assert_eq!(
        rust[0].body, inner,
        "README.md:{}: the Rust example differs from tests/readme_commands.rs",
        rust[0].line
    );
    // Cargo runs integration tests in the package root: the README's
    // relative path works as written.
    readme_rust_snippet().unwrap();
}
