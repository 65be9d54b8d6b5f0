//! The page and its files, embedded in the binary (no CDN): `GET /` serves `index.html`, `GET
//! /assets/{file}` the rest, each with its content type, an ETag (FNV-1a of the bytes) and
//! `Cache-Control: no-cache` (revalidated each load; a matching `If-None-Match` gets 304).
//!
//! To add a file: put it in `web/` and add one line to [`ASSETS`].
use axum::extract::rejection::PathRejection;
use axum::extract::Path;
use axum::http::header::{CACHE_CONTROL, CONTENT_TYPE, ETAG, IF_NONE_MATCH};
use axum::http::{HeaderMap, StatusCode};
use axum::response::{IntoResponse, Response};

use super::error::ApiError;
use super::params::path_text;

/// One embedded file.
#[derive(Debug, Clone, Copy)]
pub struct Asset {
    /// Name under `/assets/` (`index.html` is also `/`).
    pub path: &'static str,
    pub content_type: &'static str,
    pub bytes: &'static [u8],
}

/// Every embedded file.
pub const ASSETS: &[Asset] = &[
    Asset {
        path: "index.html",
        content_type: "text/html; charset=utf-8",
        bytes: include_bytes!("../../web/index.html"),
    },
    Asset {
        path: "app.css",
        content_type: "text/css; charset=utf-8",
        bytes: include_bytes!("../../web/app.css"),
    },
    Asset {
        path: "app.js",
        content_type: "text/javascript; charset=utf-8",
        bytes: include_bytes!("../../web/app.js"),
    },
    Asset {
        path: "api.js",
        content_type: "text/javascript; charset=utf-8",
        bytes: include_bytes!("../../web/api.js"),
    },
    Asset {
        path: "chart.js",
        content_type: "text/javascript; charset=utf-8",
        bytes: include_bytes!("../../web/chart.js"),
    },
    Asset {
        path: "dom.js",
        content_type: "text/javascript; charset=utf-8",
        bytes: include_bytes!("../../web/dom.js"),
    },
    Asset {
        path: "icon.svg",
        content_type: "image/svg+xml",
        bytes: include_bytes!("../../web/icon.svg"),
    },
];

/// The asset with this name.
pub fn find(path: &str) -> Option<&'static Asset> {
    ASSETS.iter().find(|a| a.path == path)
}

/// A strong ETag of the bytes (FNV-1a, 64 bit).
pub fn etag(bytes: &[u8]) -> String {
    let mut hash: u64 = 0xcbf2_9ce4_8422_2325;
    for b in bytes {
        hash ^= u64::from(*b);
        hash = hash.wrapping_mul(0x0100_0000_01b3);
    }
    format!("\"{hash:016x}\"")
}

fn serve(asset: &Asset, headers: &HeaderMap) -> Response {
    let tag = etag(asset.bytes);
    let cache = [(CACHE_CONTROL, "no-cache".to_string()), (ETAG, tag.clone())];
    let matches = headers
        .get(IF_NONE_MATCH)
        .and_then(|v| v.to_str().ok())
        .is_some_and(|v| v.split(',').any(|t| t.trim() == tag || t.trim() == "*"));
    if matches {
        return (StatusCode::NOT_MODIFIED, cache).into_response();
    }
    (
        [(CONTENT_TYPE, asset.content_type.to_string())],
        cache,
        asset.bytes,
    )
        .into_response()
}

/// `GET /`.
pub async fn index(headers: HeaderMap) -> Response {
    match find("index.html") {
        Some(asset) => serve(asset, &headers),
        None => ApiError::not_found("no page is built in").into_response(),
    }
}

/// `GET /assets/{file}`.
pub async fn asset(path: Result<Path<String>, PathRejection>, headers: HeaderMap) -> Response {
    let name = match path_text(path) {
        Ok(n) => n,
        Err(e) => return e.into_response(),
    };
    match find(&name) {
        Some(asset) => serve(asset, &headers),
        None => ApiError::not_found(format!("no asset `{name}`")).into_response(),
    }
}
