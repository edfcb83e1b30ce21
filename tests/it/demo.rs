//! The demo example runs and writes its charts (`cargo test` builds the
//! examples before the tests).

use tempfile::TempDir;

#[test]
fn demo_runs_and_writes_its_charts() {
    let dir = TempDir::new().unwrap();
    let out = dir.path().join("charts");
    // `cargo test` builds the examples next to the test binaries' folder.
    let exe = std::env::current_exe().unwrap();
    let demo = exe
        .parent()
        .unwrap()
        .parent()
        .unwrap()
        .join("examples")
        .join("demo");
    let status = std::process::Command::new(&demo)
        .arg(&out)
        .output()
        .unwrap();
    let stdout = String::from_utf8_lossy(&status.stdout);
    assert!(
        status.status.success(),
        "{stdout}\n{}",
        String::from_utf8_lossy(&status.stderr)
    );
    assert!(stdout.contains("flagged"), "{stdout}");
    assert!(stdout.contains("Caution"), "{stdout}");
    assert!(stdout.contains("T² control chart"), "{stdout}");
    for chart in ["new_batches.svg", "reference_qq.svg", "t2_chart.svg"] {
        let svg = std::fs::read_to_string(out.join(chart)).unwrap();
        assert!(svg.starts_with("<svg") && svg.contains("</svg>"), "{chart}");
    }
}
