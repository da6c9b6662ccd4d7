//! The demo's HTML report rendered in a real browser (Debian's chromium, headless, a fresh
//! profile, network-quiet flags): the page renders (the screenshot is not blank), the entity
//! labels are in the DOM, the page references nothing outside itself and starts no request.
//! The screenshot is kept in the target folder as a test artifact.

use crate::setup;
use std::path::{Path, PathBuf};
use std::process::Command;

const CHROMIUM: &str = "/usr/bin/chromium";

fn chromium(profile: &Path, extra: &[String], page: &str) -> std::process::Output {
    Command::new(CHROMIUM)
        .args([
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--no-first-run",
            "--disable-background-networking",
            "--disable-component-update",
            "--disable-sync",
        ])
        .arg(format!("--user-data-dir={}", profile.display()))
        .args(extra)
        .arg(page)
        .output()
        .expect("run chromium")
}

fn artifacts() -> PathBuf {
    let dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("browser-report");
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

#[test]
fn demo_report_renders_in_a_real_browser_without_network() {
    assert!(
        Path::new(CHROMIUM).exists(),
        "chromium is missing: apt-get install chromium (.ci/run installs it)"
    );
    let env = setup();
    let dir = artifacts();
    let report = dir.join("demo.html");
    let run = env.run(&[
        "demo",
        "--report",
        &report.display().to_string(),
        "--methods",
        &dir.join("demo.md").display().to_string(),
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let page = format!("file://{}", report.display());

    let shot = dir.join("demo-report.png");
    let _ = std::fs::remove_file(&shot);
    let out = chromium(
        &env.path("profile-shot"),
        &[
            format!("--screenshot={}", shot.display()),
            "--window-size=1100,2400".into(),
        ],
        &page,
    );
    assert!(
        shot.exists(),
        "no screenshot: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    let decoder = png::Decoder::new(std::io::BufReader::new(std::fs::File::open(&shot).unwrap()));
    let mut reader = decoder.read_info().unwrap();
    let mut pixels = vec![0; reader.output_buffer_size()];
    let info = reader.next_frame(&mut pixels).unwrap();
    let pixels = &pixels[..info.buffer_size()];
    let step = info.color_type.samples();
    let background = &pixels[..step];
    let differing = pixels.chunks(step).filter(|p| p != &background).count();
    let total = pixels.len() / step;
    assert!(
        differing * 50 > total,
        "the screenshot is nearly blank: {differing} of {total} pixels differ from the background"
    );

    let netlog = env.path("net.json");
    let dom = chromium(
        &env.path("profile-dom"),
        &[
            "--dump-dom".into(),
            format!("--log-net-log={}", netlog.display()),
        ],
        &page,
    );
    let dom = String::from_utf8_lossy(&dom.stdout).to_string();
    for label in [
        "Hestravoy",
        "Glumveth",
        "Ranks before and after adjustment, 2023",
        "<svg",
        "INVENTED DATA",
    ] {
        assert!(dom.contains(label), "{label} missing from the rendered DOM");
    }
    // The SVG namespace is a name, not an address that is fetched.
    let dom = dom
        .replace("xmlns=\"http://www.w3.org/2000/svg\"", "")
        .replace("xmlns:xlink=\"http://www.w3.org/1999/xlink\"", "");
    for external in [
        "src=", "<link", "<script", "<img", "<iframe", "url(", "@import", "http://", "https://",
    ] {
        assert!(
            !dom.contains(external),
            "the page references something outside itself: {external}"
        );
    }
    // Chromium's own background calls are initiated by the browser ("not an origin"); nothing may
    // be initiated by the page.
    let log: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&netlog).unwrap()).unwrap();
    for event in log["events"].as_array().unwrap() {
        let params = &event["params"];
        if let Some(initiator) = params["initiator"].as_str() {
            assert_eq!(
                initiator, "not an origin",
                "a request left the page: {params}"
            );
        }
    }
}

#[test]
fn no_script_from_a_hostile_table_runs_in_the_report() {
    // The injected markup would change the page's title if it ran; escaped, it is only text.
    assert!(
        Path::new(CHROMIUM).exists(),
        "chromium is missing: apt-get install chromium"
    );
    let env = setup();
    let payload = "<img src=x onerror=\"document.title='INJECTED'\"><script>document.title='INJECTED'</script>";
    let quoted = payload.replace('"', "\"\"");
    let refs = env.path("refs");
    std::fs::create_dir_all(&refs).unwrap();
    // Invented entities and figures (user-assigned codes): only the text matters here.
    std::fs::write(refs.join("datapackage.json"), r#"{"aliases":["aliases.csv"],"resources":[{"name":"fx","path":"fx.csv","kind":"fx"},{"name":"ppp","path":"ppp.csv","kind":"ppp"}]}"#).unwrap();
    std::fs::write(
        refs.join("aliases.csv"),
        format!("name,code\n\"{quoted}\",XQA\nPlainland,XQB\n"),
    )
    .unwrap();
    std::fs::write(refs.join("fx.csv"), "code,2020\nXQA,2\nXQB,4\n").unwrap();
    std::fs::write(refs.join("ppp.csv"), "code,2020\nXQA,1\nXQB,3\n").unwrap();
    let input = env.write("in.csv", &format!("country,year,value,item\n\"{quoted}\",2020,10,\"{quoted}\"\nPlainland,2020,20,\"{quoted}\"\n"));
    let report = env.path("hostile.html");
    let run = env.run(&[
        "adjust",
        &input,
        "--refs",
        &refs.display().to_string(),
        "--steps",
        "ppp",
        "--group",
        "item",
        "--report",
        &report.display().to_string(),
        "--format",
        "csv",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let out = chromium(
        &env.path("profile-hostile"),
        &["--dump-dom".into()],
        &format!("file://{}", report.display()),
    );
    let dom = String::from_utf8_lossy(&out.stdout);
    assert!(
        dom.contains("<title>levelfield report:"),
        "{}",
        &dom[..dom.len().min(400)]
    );
    assert!(!dom.contains("<title>INJECTED"), "an injected script ran");
    assert!(!dom.contains("<img"), "an injected element was built");
    assert!(dom.contains("onerror="), "the payload is shown as text");
}
