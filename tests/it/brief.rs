//! `hubwatch brief` on the bundled sample: a self-contained page (no script, nothing fetched),
//! every figure inline, no raw ID when pseudonymised (every ID of the input searched for), a
//! warning when raw IDs are asked for, written privately; and, where headless Chromium is
//! installed (Debian's `chromium`, installed by CI), the page rendered to a PNG that is not blank
//! and a DOM with every figure.

use std::path::Path;

use crate::common::{hubwatch, skip};

const AS_OF: &str = "2026-12-01";

/// Every ID in the sample's two tables (people's IDs, and both ends of every exposure).
fn sample_ids() -> Vec<String> {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-contacts");
    let mut ids = std::collections::BTreeSet::new();
    for (file, cols) in [
        ("people.csv", &[0usize][..]),
        ("exposures.csv", &[0, 1][..]),
    ] {
        let text = std::fs::read_to_string(root.join(file)).unwrap();
        for line in text.lines().skip(1) {
            let fields: Vec<&str> = line.split(',').collect();
            for &c in cols {
                if let Some(v) = fields.get(c).map(|v| v.trim()).filter(|v| !v.is_empty()) {
                    ids.insert(v.to_string());
                }
            }
        }
    }
    ids.into_iter().collect()
}

/// True when `id` occurs in `text` not as part of a longer run of letters and digits.
fn occurs(text: &str, id: &str) -> bool {
    text.match_indices(id).any(|(i, _)| {
        let before = text[..i].chars().next_back();
        let after = text[i + id.len()..].chars().next();
        !before.is_some_and(|c| c.is_ascii_alphanumeric())
            && !after.is_some_and(|c| c.is_ascii_alphanumeric())
    })
}

fn brief(out: &Path, extra: &[&str]) -> Option<String> {
    let mut args = vec!["brief", "--as-of", AS_OF, "--out", out.to_str().unwrap()];
    args.extend_from_slice(extra);
    let (code, _, err) = hubwatch(&args);
    if code != 0 && err.contains("TrueType font") {
        skip(&format!("brief: {err}"));
        return None;
    }
    assert_eq!(code, 0, "{err}");
    Some(std::fs::read_to_string(out).unwrap())
}

#[test]
fn the_brief_is_self_contained_and_holds_no_raw_id() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("brief.html");
    let Some(page) = brief(&out, &[]) else {
        return;
    };
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        let mode = std::fs::metadata(&out).unwrap().permissions().mode();
        assert_eq!(mode & 0o777, 0o600);
    }
    // Self-contained: no script, no stylesheet or image or font fetched.
    let lower = page.to_lowercase();
    for banned in [
        "<script", "<link", "<img", "<iframe", "@import", "url(", " src=", "href=",
    ] {
        assert!(!lower.contains(banned), "the page holds {banned}");
    }
    // Every figure inline (14 on the sample, as `hubwatch figures` writes).
    assert_eq!(page.matches("<svg").count(), 14);
    assert!(page.contains("does not replace, the judgement of public-health staff"));
    assert!(page.contains("Model-based indicators"));
    assert!(page.contains("@media print") && page.contains("size: A4"));
    // No ID of the input anywhere on the page.
    let ids = sample_ids();
    assert!(ids.len() > 200, "{} IDs", ids.len());
    let leaked: Vec<&String> = ids.iter().filter(|id| occurs(&page, id)).collect();
    assert!(
        leaked.is_empty(),
        "raw IDs on a pseudonymised page: {leaked:?}"
    );
    // Existing pages are replaced only with --force.
    let (code, _, err) = hubwatch(&["brief", "--as-of", AS_OF, "--out", out.to_str().unwrap()]);
    assert_eq!(code, 2, "{err}");
}

#[test]
fn raw_ids_only_when_asked_and_with_a_warning() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("raw.html");
    let Some(page) = brief(&out, &["--raw-ids", "--top", "5"]) else {
        return;
    };
    assert!(page.contains("shows the export's own person IDs"));
    let (_, json, _) = hubwatch(&["priority", "--as-of", AS_OF, "--top", "5", "--json"]);
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    for r in v["list"].as_array().unwrap() {
        let id = r["id"].as_str().unwrap();
        assert!(occurs(&page, id), "{id} missing from the raw page");
    }
}

#[test]
fn headless_chromium_renders_the_brief_with_every_figure() {
    let chromium = ["chromium", "chromium-browser"].into_iter().find(|c| {
        std::process::Command::new(c)
            .arg("--version")
            .output()
            .is_ok_and(|o| o.status.success())
    });
    let Some(chromium) = chromium else {
        // Not an error even in CI: the issue asks for SKIPPED where it cannot be installed.
        eprintln!("SKIPPED: headless Chromium is not installed (Debian package chromium)");
        return;
    };
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("brief.html");
    if brief(&out, &[]).is_none() {
        return;
    }
    let url = format!("file://{}", out.display());
    let png = dir.path().join("brief.png");
    let shot = std::process::Command::new(chromium)
        .args([
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--hide-scrollbars",
            "--window-size=1000,1400",
        ])
        .arg(format!("--screenshot={}", png.display()))
        .arg(&url)
        .output()
        .unwrap();
    assert!(png.exists(), "{}", String::from_utf8_lossy(&shot.stderr));
    let bytes = std::fs::read(&png).unwrap();
    assert_eq!(&bytes[..8], b"\x89PNG\r\n\x1a\n");
    // A blank 1000 x 1400 page compresses to a few kilobytes; text, tables and a figure do not.
    assert!(bytes.len() > 50_000, "{} bytes: blank?", bytes.len());
    // The rendered DOM holds every figure.
    let dom = std::process::Command::new(chromium)
        .args(["--headless", "--no-sandbox", "--disable-gpu", "--dump-dom"])
        .arg(&url)
        .output()
        .unwrap();
    let dom = String::from_utf8_lossy(&dom.stdout);
    assert_eq!(
        dom.matches("<svg").count(),
        14,
        "figures in the rendered page"
    );
}
