//! A small static file server on 127.0.0.1 for the page (GET and HEAD, correct MIME types).
//!
//! Browsers only compile wasm streamed as `application/wasm` and only load module scripts
//! with a JavaScript type, which is why the page folder is not opened from `file://` (the
//! one-file page that `forefield dist` writes is made for that).

use std::io::{BufRead, BufReader, Write};
use std::net::{TcpListener, TcpStream};
use std::path::{Component, Path, PathBuf};

use anyhow::{Context, Result};

pub fn serve(dir: &Path, port: u16) -> Result<()> {
    let root = dir
        .canonicalize()
        .with_context(|| format!("serving {}", dir.display()))?;
    let listener = TcpListener::bind(("127.0.0.1", port))
        .with_context(|| format!("listening on 127.0.0.1:{port}"))?;
    outln!(
        "serving {} at http://127.0.0.1:{port}/ (Ctrl-C to stop)",
        dir.display()
    );
    for stream in listener.incoming() {
        let Ok(stream) = stream else { continue };
        let root = root.clone();
        std::thread::spawn(move || {
            // A client that hangs up mid-request is not the server's problem.
            let _ = handle(stream, &root);
        });
    }
    Ok(())
}

fn handle(mut stream: TcpStream, root: &Path) -> std::io::Result<()> {
    let mut reader = BufReader::new(stream.try_clone()?);
    let mut request_line = String::new();
    reader.read_line(&mut request_line)?;
    // Drain the headers; nothing in them changes the answer.
    loop {
        let mut line = String::new();
        if reader.read_line(&mut line)? == 0 || line == "\r\n" || line == "\n" {
            break;
        }
    }
    let mut parts = request_line.split_whitespace();
    let method = parts.next().unwrap_or("");
    let target = parts.next().unwrap_or("/");
    if method != "GET" && method != "HEAD" {
        return respond(
            &mut stream,
            "405 Method Not Allowed",
            "text/plain",
            b"method not allowed",
            true,
        );
    }
    let Some(path) = resolve(root, target) else {
        return respond(
            &mut stream,
            "404 Not Found",
            "text/plain",
            b"not found",
            method == "GET",
        );
    };
    match std::fs::read(&path) {
        Ok(body) => respond(
            &mut stream,
            "200 OK",
            mime_type(&path),
            &body,
            method == "GET",
        ),
        Err(_) => respond(
            &mut stream,
            "404 Not Found",
            "text/plain",
            b"not found",
            method == "GET",
        ),
    }
}

/// Maps a request target to a file under `root`, refusing anything that climbs out of it.
fn resolve(root: &Path, target: &str) -> Option<PathBuf> {
    let path = target.split(['?', '#']).next().unwrap_or("/");
    let decoded = percent_decode(path)?;
    let mut full = root.to_path_buf();
    for component in Path::new(decoded.trim_start_matches('/')).components() {
        match component {
            Component::Normal(part) => full.push(part),
            Component::CurDir => {}
            _ => return None,
        }
    }
    if full.is_dir() {
        full.push("index.html");
    }
    full.is_file().then_some(full)
}

fn percent_decode(text: &str) -> Option<String> {
    let bytes = text.as_bytes();
    let mut out = Vec::with_capacity(bytes.len());
    let mut i = 0;
    while i < bytes.len() {
        if bytes[i] == b'%' {
            let hex = std::str::from_utf8(bytes.get(i + 1..i + 3)?).ok()?;
            out.push(u8::from_str_radix(hex, 16).ok()?);
            i += 3;
        } else {
            out.push(bytes[i]);
            i += 1;
        }
    }
    String::from_utf8(out).ok()
}

/// The Content-Type of a page file by its extension (the one-file page types its blobs so too).
pub(crate) fn mime_type(path: &Path) -> &'static str {
    match path.extension().and_then(|e| e.to_str()).unwrap_or("") {
        "html" => "text/html; charset=utf-8",
        "js" | "mjs" => "text/javascript; charset=utf-8",
        "css" => "text/css; charset=utf-8",
        "wasm" => "application/wasm",
        "json" => "application/json",
        "png" => "image/png",
        "svg" => "image/svg+xml",
        "tif" | "tiff" => "image/tiff",
        "geojson" => "application/geo+json",
        "csv" => "text/csv; charset=utf-8",
        "ts" => "text/plain; charset=utf-8",
        _ => "application/octet-stream",
    }
}

fn respond(
    stream: &mut TcpStream,
    status: &str,
    mime: &str,
    body: &[u8],
    with_body: bool,
) -> std::io::Result<()> {
    let header = format!(
        "HTTP/1.1 {status}\r\nContent-Type: {mime}\r\nContent-Length: {}\r\nCache-Control: no-cache\r\nConnection: close\r\n\r\n",
        body.len()
    );
    stream.write_all(header.as_bytes())?;
    if with_body {
        stream.write_all(body)?;
    }
    stream.flush()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn paths_cannot_escape_the_root() {
        let root = std::env::temp_dir();
        assert_eq!(resolve(&root, "/../etc/passwd"), None);
        assert_eq!(resolve(&root, "/%2e%2e/etc/passwd"), None);
    }

    #[test]
    fn wasm_is_served_as_wasm() {
        assert_eq!(
            mime_type(Path::new("pkg/forefield_wasm_bg.wasm")),
            "application/wasm"
        );
        assert_eq!(
            mime_type(Path::new("main.js")),
            "text/javascript; charset=utf-8"
        );
    }
}
