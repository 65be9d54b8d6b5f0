//! The page's files as the binary embeds them: every file in `web/` is served, every `/assets/` link of
//! `index.html` and every module a script imports is embedded with a content type that fits it, and no
//! file loads anything from another host (the page works without the internet).
use std::collections::BTreeSet;

use halotank::http::assets::{find, ASSETS};

fn web_dir() -> std::path::PathBuf {
    std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("web")
}

/// Every `prefix` ... `end` span of `text`, the text between them.
fn between<'a>(text: &'a str, prefix: &str, end: char) -> Vec<&'a str> {
    text.match_indices(prefix)
        .filter_map(|(i, _)| {
            let rest = &text[i + prefix.len()..];
            rest.find(end).map(|j| &rest[..j])
        })
        .collect()
}

#[test]
fn every_file_in_web_is_embedded_byte_for_byte() {
    let mut on_disk = BTreeSet::new();
    for entry in std::fs::read_dir(web_dir()).unwrap() {
        let entry = entry.unwrap();
        let name = entry.file_name().into_string().unwrap();
        let asset = find(&name).unwrap_or_else(|| panic!("web/{name} is not in ASSETS (src/http/assets.rs)"));
        assert_eq!(asset.bytes, std::fs::read(entry.path()).unwrap(), "web/{name}");
        on_disk.insert(name);
    }
    let embedded: BTreeSet<String> = ASSETS.iter().map(|a| a.path.to_string()).collect();
    assert_eq!(embedded, on_disk, "ASSETS and web/ differ");
}

#[test]
fn links_and_imports_resolve_to_embedded_files_with_fitting_types() {
    let index = find("index.html").expect("index.html embedded");
    let html = std::str::from_utf8(index.bytes).unwrap();
    let mut wanted: Vec<String> = between(html, "\"/assets/", '"')
        .into_iter()
        .map(str::to_string)
        .collect();
    for asset in ASSETS.iter().filter(|a| a.path.ends_with(".js")) {
        let js = std::str::from_utf8(asset.bytes).unwrap();
        wanted.extend(between(js, "from \"./", '"').into_iter().map(str::to_string));
    }
    assert!(
        wanted.iter().any(|w| w == "app.js"),
        "index.html loads app.js: {wanted:?}"
    );
    for name in &wanted {
        let asset = find(name).unwrap_or_else(|| panic!("{name} is linked or imported but not embedded"));
        // Media types: text/javascript for modules (RFC 9239), text/css, image/svg+xml, text/html.
        let want = match name.rsplit('.').next() {
            Some("js") => "text/javascript",
            Some("css") => "text/css",
            Some("svg") => "image/svg+xml",
            Some("html") => "text/html",
            other => panic!("unexpected file type {other:?} for {name}"),
        };
        assert!(
            asset.content_type.starts_with(want),
            "{name}: {}",
            asset.content_type
        );
    }
}

#[test]
fn nothing_is_fetched_from_another_host() {
    for asset in ASSETS {
        let text = std::str::from_utf8(asset.bytes).unwrap();
        for needle in ["http://", "https://", "//fonts.", "@import", "url(http"] {
            // The SVG namespace URI is a name, not a fetch.
            let hits = text
                .match_indices(needle)
                .filter(|(i, _)| !text[*i..].starts_with("http://www.w3.org/2000/svg"))
                .count();
            assert_eq!(hits, 0, "{} contains {needle:?}", asset.path);
        }
    }
}
