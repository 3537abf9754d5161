//! The HTML report: hostile input stays inert text, the page fetches nothing from the
//! network, and a real browser (headless Chromium) renders it to a non-blank image.

use std::path::{Path, PathBuf};
use std::process::{Command, Output, Stdio};
use std::time::{Duration, Instant};

use gapcert::audit::{AuditSettings, Finding, FindingCode};
use gapcert::ingest::{IngestSettings, LogFormat, LogSource};
use gapcert::report::escape::escape_html;
use gapcert::report::html::write_html;
use gapcert::report::AuditDocument;

const SCRIPT_NAME: &str = "<script>alert(1)</script>";
const ATTRIBUTE_NAME: &str = "\"><img src=x onerror=alert(1)>";

/// A log whose run names, family and split names try to break out of the page.
const HOSTILE_CSV: &str = r#"run,family,dim,vc_dim,train_n,train_error_rate,holdout_n,holdout_error_rate,holdout_set,claimed_accuracy
<script>alert(1)</script>,linear,3,,5000,0.04,2000,0.05,"<b>split</b>",0.9
"""><img src=x onerror=alert(1)>",vc,,1000000,100,0.1,1,0,"'&'",0.5
plain & simple,<svg onload=alert(1)>,,,1000000000000,0.01,1,1,,0.99
"tiny ""n"" run",ray,,,1,0,1,0,,
huge,vc,,10000000,1000000000000,0.2,1000000000,0.3,,0.75
"#;

fn hostile_document() -> AuditDocument {
    let sources = [LogSource::Memory(
        "hostile/<runs>.csv",
        HOSTILE_CSV.as_bytes(),
        LogFormat::Csv,
    )];
    let ingest = IngestSettings {
        lenient: true,
        ..IngestSettings::default()
    };
    let mut doc = gapcert::audit_sources(&sources, &AuditSettings::default(), &ingest)
        .expect("the hostile log is valid");
    assert!(!doc.runs.is_empty(), "the hostile log produced runs");
    // Hostile text in every other place the page shows input text.
    for run in &mut doc.runs {
        run.source = format!("{SCRIPT_NAME}:1");
        run.findings.push(Finding {
            code: FindingCode::HoldoutReused,
            message: format!("message with {ATTRIBUTE_NAME} and {SCRIPT_NAME}"),
        });
    }
    if let Some(run) = doc.runs.iter_mut().find(|r| r.vc_allowance.is_some()) {
        // Shown in the theory chart's legend and curve labels (drawn by plotters).
        run.family = Some(SCRIPT_NAME.to_string());
    }
    for input in &mut doc.inputs {
        input.path = ATTRIBUTE_NAME.to_string();
    }
    doc.settings
        .column_map
        .push((SCRIPT_NAME.to_string(), ATTRIBUTE_NAME.to_string()));
    doc.cautions.push(SCRIPT_NAME.to_string());
    doc
}

fn render(doc: &AuditDocument) -> String {
    let mut out = Vec::new();
    write_html(doc, &mut out).expect("the page is written");
    String::from_utf8(out).expect("the page is UTF-8")
}

fn assert_inert(html: &str) {
    let lower = html.to_lowercase();
    for forbidden in ["<script", "<img", "<b>", "<svg onload", "onerror=alert(1)>"] {
        assert!(
            !lower.contains(forbidden),
            "the page contains unescaped `{forbidden}`"
        );
    }
    assert!(!html.contains(SCRIPT_NAME));
    assert!(!html.contains(ATTRIBUTE_NAME));
}

#[test]
fn hostile_text_is_escaped_everywhere() {
    let doc = hostile_document();
    let html = render(&doc);
    assert_inert(&html);
    // The names are still there, as text.
    assert!(html.contains(&escape_html(SCRIPT_NAME)));
    assert!(html.contains("&lt;img src=x onerror=alert(1)&gt;"));
}

#[test]
fn hostile_text_in_chart_labels_is_escaped_once() {
    let doc = hostile_document();
    let html = render(&doc);
    // plotters escapes chart text itself; a second escape would show "&amp;lt;".
    assert!(
        !html.contains("&amp;lt;script"),
        "chart labels were escaped twice"
    );
    assert!(html.contains("&lt;script&gt;alert(1)&lt;/script&gt;"));
}

#[test]
fn page_fetches_nothing_from_the_network() {
    for doc in [demo_document(), hostile_document()] {
        let html = render(&doc);
        let lower = html.to_lowercase();
        for attribute in [
            "src=", "href=", "url(", "@import", "<link", "<iframe", "<object", "<embed",
        ] {
            for (at, _) in lower.match_indices(attribute) {
                let context = &lower[at..(at + 60).min(lower.len())];
                assert!(
                    !context.contains("http:")
                        && !context.contains("https:")
                        && !context.contains("//"),
                    "network reference near `{context}`"
                );
            }
        }
    }
    // The demo page carries no URL at all (the SVG namespace is left implicit).
    let html = render(&demo_document());
    assert!(!html.contains("http://") && !html.contains("https://"));
    assert!(
        !html.to_lowercase().contains("<script"),
        "the page needs no script"
    );
}

#[test]
fn empty_audit_still_renders() {
    let mut doc = demo_document();
    doc.runs.clear();
    doc.inputs.clear();
    let html = render(&doc);
    assert!(html.contains("No runs were audited"));
    assert!(html.ends_with("</html>\n"));
}

#[test]
fn page_has_the_five_parts() {
    let doc = demo_document();
    let html = render(&doc);
    for part in [
        "Accuracy-claim audit",
        "Held-out evidence, run by run",
        "What the training data alone guarantee",
        "Runs, worst first",
        "Cautions",
        "Sauer bound, d_VC = ",
    ] {
        assert!(html.contains(part), "missing `{part}`");
    }
    // The interval and theory charts, and a wear chart per split (six at most).
    assert_eq!(
        html.matches("<svg").count(),
        2 + doc.splits.len().min(6),
        "the inline charts"
    );
    for input in &doc.inputs {
        assert!(html.contains(&input.sha256), "input hash shown");
    }
    for run in &doc.runs {
        assert!(
            html.contains(&escape_html(&run.run)),
            "run {} listed",
            run.run
        );
        for finding in &run.findings {
            assert!(html.contains(&escape_html(&finding.message)));
        }
    }
    for caution in &doc.cautions {
        assert!(html.contains(&escape_html(caution)));
    }
}

fn demo_document() -> AuditDocument {
    gapcert::audit_sources(
        &gapcert::demo::sources(),
        &AuditSettings::default(),
        &IngestSettings::default(),
    )
    .expect("the demo audits")
}

// ---------------------------------------------------------------------------
// Headless Chromium

const CHROMIUM: &str = "/usr/bin/chromium";

/// Runs a command with a deadline, killing it (by its own id) if it overruns.
fn run_with_deadline(command: &mut Command, deadline: Duration) -> Output {
    let mut child = command
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("the command starts");
    let started = Instant::now();
    // Drain the pipes on threads so a chatty child cannot block on a full pipe.
    let mut stdout = child.stdout.take().expect("piped");
    let mut stderr = child.stderr.take().expect("piped");
    let out_thread = std::thread::spawn(move || {
        let mut buffer = Vec::new();
        let _ = std::io::Read::read_to_end(&mut stdout, &mut buffer);
        buffer
    });
    let err_thread = std::thread::spawn(move || {
        let mut buffer = Vec::new();
        let _ = std::io::Read::read_to_end(&mut stderr, &mut buffer);
        buffer
    });
    let status = loop {
        if let Some(status) = child.try_wait().expect("wait") {
            break status;
        }
        if started.elapsed() > deadline {
            let _ = child.kill();
            let status = child.wait().expect("wait after kill");
            panic!("{command:?} did not finish within {deadline:?} ({status})");
        }
        std::thread::sleep(Duration::from_millis(100));
    };
    Output {
        status,
        stdout: out_thread.join().unwrap_or_default(),
        stderr: err_thread.join().unwrap_or_default(),
    }
}

fn chromium_command(profile: &Path) -> Command {
    let mut command = Command::new(CHROMIUM);
    command.args([
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-quic",
        "--no-first-run",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
        "--hide-scrollbars",
    ]);
    command.arg(format!("--user-data-dir={}", profile.display()));
    command
}

/// The IDAT bytes of a PNG (the compressed pixels), with its width and height.
fn png_pixels(png: &[u8]) -> (u32, u32, Vec<u8>) {
    assert!(png.starts_with(b"\x89PNG\r\n\x1a\n"), "not a PNG");
    let mut at = 8;
    let (mut width, mut height, mut idat) = (0, 0, Vec::new());
    while at + 8 <= png.len() {
        let length = u32::from_be_bytes(png[at..at + 4].try_into().expect("4 bytes")) as usize;
        let kind = &png[at + 4..at + 8];
        let data = &png[(at + 8).min(png.len())..(at + 8 + length).min(png.len())];
        match kind {
            b"IHDR" => {
                width = u32::from_be_bytes(data[0..4].try_into().expect("4 bytes"));
                height = u32::from_be_bytes(data[4..8].try_into().expect("4 bytes"));
            }
            b"IDAT" => idat.extend_from_slice(data),
            _ => {}
        }
        at += 12 + length;
    }
    (width, height, idat)
}

/// Shannon entropy of a byte stream, in bits per byte.
fn entropy(bytes: &[u8]) -> f64 {
    let mut counts = [0usize; 256];
    for &b in bytes {
        counts[b as usize] += 1;
    }
    let total = bytes.len().max(1) as f64;
    counts
        .iter()
        .filter(|&&c| c > 0)
        .map(|&c| {
            let p = c as f64 / total;
            -p * p.log2()
        })
        .sum()
}

fn chromium_or_skip() -> Option<PathBuf> {
    if Path::new(CHROMIUM).exists() {
        return Some(PathBuf::from(CHROMIUM));
    }
    crate::common::cannot_run(&format!(
        "{CHROMIUM} is missing (the CI image must install chromium)"
    ));
    None
}

#[test]
fn chromium_renders_the_demo_report() {
    if chromium_or_skip().is_none() {
        return;
    }
    let dir = tempfile::tempdir().expect("temp dir");
    let html = dir.path().join("report.html");
    let json = dir.path().join("report.json");
    let status = Command::new(crate::common::binary())
        .args(["demo", "--html"])
        .arg(&html)
        .args(["--format", "json", "--output"])
        .arg(&json)
        .status()
        .expect("gapcert runs");
    // The demo's gate may pass (0) or fail (1); 2 would be an error.
    assert!(
        matches!(status.code(), Some(0) | Some(1)),
        "gapcert demo exited with {status}"
    );
    assert!(html.exists(), "the page was written");
    let url = format!("file://{}", html.display());

    // 1. The DOM as the browser parsed it, with the browser's log on stderr.
    let profile = tempfile::tempdir().expect("profile dir");
    let output = run_with_deadline(
        chromium_command(profile.path())
            .args(["--enable-logging=stderr", "--v=0", "--dump-dom"])
            .arg(&url),
        Duration::from_secs(120),
    );
    assert!(
        output.status.success(),
        "chromium --dump-dom failed: {}",
        String::from_utf8_lossy(&output.stderr)
    );
    let dom = String::from_utf8_lossy(&output.stdout);
    assert!(
        dom.contains("Accuracy-claim audit"),
        "the page title text is in the DOM"
    );
    // The claims chart (the demo has a release note), the interval chart, the
    // theory chart and the wear charts of the six most compared splits.
    assert_eq!(
        dom.matches("<svg").count(),
        9,
        "every chart parsed as inline SVG"
    );
    let log = String::from_utf8_lossy(&output.stderr);
    for line in log.lines() {
        let lower = line.to_lowercase();
        assert!(
            !lower.contains("console("),
            "browser console message: {line}"
        );
        assert!(!lower.contains("uncaught"), "script error: {line}");
        assert!(
            !lower.contains("net::err_"),
            "the page tried a network fetch: {line}"
        );
    }

    // 2. A screenshot that is not blank.
    let profile = tempfile::tempdir().expect("profile dir");
    let screenshot = dir.path().join("report.png");
    let output = run_with_deadline(
        chromium_command(profile.path())
            .arg(format!("--screenshot={}", screenshot.display()))
            .arg("--window-size=1280,2000")
            .arg(&url),
        Duration::from_secs(120),
    );
    assert!(
        output.status.success(),
        "chromium --screenshot failed: {}",
        String::from_utf8_lossy(&output.stderr)
    );
    let png = std::fs::read(&screenshot).expect("the screenshot exists");
    assert!(
        png.len() > 10 * 1024,
        "the screenshot is only {} bytes",
        png.len()
    );
    let (width, height, idat) = png_pixels(&png);
    assert_eq!((width, height), (1280, 2000));
    // A flat image deflates to a short, repetitive stream; a page with text and charts
    // gives a long stream of nearly random bytes.
    let distinct = idat.iter().collect::<std::collections::HashSet<_>>().len();
    assert!(
        distinct > 200,
        "only {distinct} distinct bytes in the pixel stream"
    );
    assert!(
        entropy(&idat) > 7.0,
        "pixel stream entropy {:.2} bits/byte",
        entropy(&idat)
    );
}
