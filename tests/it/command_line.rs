//! Each subcommand takes only the options that apply to it: clap refuses
//! the others (exit code 2, before anything is read), and `--help` lists
//! exactly what parsing accepts.

use crate::common;

fn run(args: &[&str]) -> (Option<i32>, String, String) {
    common::run_in(common::root(), args)
}

/// An option of another subcommand is a usage error (exit code 2) that
/// clap explains; the run reads no file.
#[test]
fn options_of_other_commands_are_refused() {
    let refused: &[(&[&str], &str)] = &[
        // Annotation and one-line formats are `check`'s.
        (
            &["impedance", "--format", "github", "examples"],
            "invalid value 'github'",
        ),
        (
            &["impedance", "--format", "gitlab", "examples"],
            "invalid value 'gitlab'",
        ),
        (
            &["coupons", "--format", "concise", "examples"],
            "invalid value 'concise'",
        ),
        // Commands that read no stackup take no cache or root.
        (&["rules", "--no-cache"], "unexpected argument '--no-cache'"),
        (
            &["explain", "--root", ".", "impedance-off-target"],
            "unexpected argument '--root'",
        ),
        // The cache option belongs after the command that solves.
        (
            &["--no-cache", "check", "examples"],
            "unexpected argument '--no-cache'",
        ),
    ];
    for (args, message) in refused {
        let (code, out, err) = run(args);
        assert_eq!(code, Some(2), "{args:?}: {err}");
        assert!(out.is_empty(), "{args:?} printed {out}");
        assert!(err.contains(message), "{args:?}: {err}");
    }
}

/// The same options where they apply are accepted.
#[test]
fn options_where_they_apply_are_accepted() {
    let (code, _, err) = run(&["check", "--no-cache", "--format", "concise", "examples"]);
    assert_eq!(code, Some(1), "{err}");
    let (code, out, err) = run(&[
        "impedance",
        "--no-cache",
        "--root",
        ".",
        "--format",
        "json",
        "examples/radar-sensor-6l",
    ]);
    assert_eq!(code, Some(0), "{err}");
    assert!(out.starts_with('{') || out.starts_with('['), "{out}");
}

/// `--help` of each command lists the formats and options it accepts, and
/// not the others.
#[test]
fn help_lists_what_parsing_accepts() {
    let help = |cmd: &str| run(&[cmd, "--help"]).1;
    let check = help("check");
    for f in ["concise", "github", "gitlab", "--no-cache", "--root"] {
        assert!(check.contains(f), "check --help lacks {f}");
    }
    for cmd in ["impedance", "coupons"] {
        let h = help(cmd);
        assert!(h.contains("--no-cache") && h.contains("json"), "{h}");
        for f in ["concise", "github", "gitlab"] {
            assert!(!h.contains(f), "{cmd} --help lists {f}");
        }
    }
    for cmd in ["rules", "explain"] {
        let h = help(cmd);
        assert!(!h.contains("--no-cache") && !h.contains("--root"), "{h}");
    }
}
