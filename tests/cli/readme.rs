//! Every `hedgerow` command the README shows runs, in order, on the demo data.

use std::path::PathBuf;
use std::process::Command;

const PREFIX: &str = "cargo run --release -p hedgerow-cli -- ";

#[test]
fn readme_commands_run_on_the_demo_data() {
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../..");
    let readme = std::fs::read_to_string(root.join("README.md")).expect("README.md");
    let commands: Vec<&str> = readme
        .lines()
        .filter_map(|l| l.trim().strip_prefix(PREFIX))
        .collect();
    assert!(
        commands.len() >= 5,
        "expected the README's commands, found {}",
        commands.len()
    );
    std::fs::create_dir_all(root.join("target")).expect("target dir");
    for args in commands {
        let out = Command::new(env!("CARGO_BIN_EXE_hedgerow"))
            .current_dir(&root)
            .args(args.split_whitespace())
            .output()
            .expect("run");
        assert!(
            out.status.success(),
            "`hedgerow {args}` failed: {}",
            String::from_utf8_lossy(&out.stderr)
        );
        if args.contains("--json") {
            let v: serde_json::Value = serde_json::from_slice(&out.stdout).expect("json output");
            assert_eq!(v["rows"], 20_000);
        }
    }
    let decoded =
        std::fs::read_to_string(root.join("target/predictions.csv")).expect("decode output");
    assert_eq!(decoded.lines().count(), 20_001);
}
