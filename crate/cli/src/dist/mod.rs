//! `forefield dist`: the page as it is published.
//!
//! From the built page folder (`www/` once the wasm is built) it writes a folder any static
//! host serves as is, with a service worker that keeps it usable offline after the first visit,
//! and `forefield.html`: the whole page in one file (modules, engine, styles, sample valley)
//! that opens from `file://` with no server. Browsers load neither module scripts nor wasm from
//! a `file://` folder, so the one file carries them inside and makes each a `blob:` URL at
//! start-up (`boot.js`), under a Content-Security-Policy that admits nothing from outside.

use std::collections::BTreeMap;
use std::fmt::Write as _;
use std::path::{Path, PathBuf};

use anyhow::{bail, Context, Result};
use base64::engine::general_purpose::STANDARD as BASE64;
use base64::Engine as _;
use sha2::{Digest, Sha256};

use crate::serve::mime_type;

/// The one-file page's start-up script, inlined and admitted by its hash.
const BOOT: &str = include_str!("boot.js");

/// Files the page cannot start without; their absence means the wasm step has not run.
const REQUIRED: [&str; 6] = [
    "index.html",
    "main.js",
    "worker.js",
    "pkg/forefield_wasm.js",
    "pkg/forefield_wasm_bg.wasm",
    WORKER_GLUE,
];

/// The run worker is a classic script that loads this glue unless it runs after it; the
/// one-file page carries the two as one text.
const WORKER: &str = "worker.js";
const WORKER_GLUE: &str = "pkg/forefield_wasm_classic.js";

/// Written into every published folder; only a folder holding it is replaced.
const LIST: &str = "offline-files.json";

/// The one-file page's policy: its own two inline blocks by hash, the blob: URLs it makes of
/// what it carries, and the engine's wasm compile; nothing from any origin.
fn single_file_policy(boot_hash: &str, style_hash: &str) -> String {
    format!(
        "default-src 'none'; script-src '{boot_hash}' blob: 'wasm-unsafe-eval'; worker-src blob:; \
         connect-src blob:; img-src data: blob:; style-src '{style_hash}'; object-src 'none'; \
         base-uri 'none'; form-action 'none'"
    )
}

/// What `dist` wrote, for its report.
#[derive(Debug)]
pub struct Published {
    pub files: usize,
    pub version: String,
    pub single_file: PathBuf,
    pub single_file_bytes: usize,
}

/// Writes the published folder `out` from the built page folder `from`.
pub fn dist(from: &Path, out: &Path) -> Result<Published> {
    let files = page_files(from)?;
    for required in REQUIRED {
        if !files.contains_key(required) {
            bail!(
                "{} has no {required}: build the page first (./build.sh dist does both)",
                from.display()
            );
        }
    }
    let version = version(&files);
    prepare_out(out)?;

    let index = text(&files, "index.html")?;
    let marker = format!("<meta name=\"forefield-offline\" content=\"{version}\">");
    let served_index = insert_after(index, "<meta charset=\"utf-8\">", &format!("\n  {marker}"))
        .context("index.html")?;
    for (path, bytes) in &files {
        let target = out.join(path);
        if let Some(parent) = target.parent() {
            std::fs::create_dir_all(parent)
                .with_context(|| format!("creating {}", parent.display()))?;
        }
        let bytes = if path == "index.html" {
            served_index.as_bytes()
        } else {
            bytes.as_slice()
        };
        std::fs::write(&target, bytes).with_context(|| format!("writing {}", target.display()))?;
    }
    let mut cached: Vec<&str> = vec!["./"];
    cached.extend(files.keys().map(String::as_str).filter(|p| *p != "sw.js"));
    let list = serde_json::to_string_pretty(&cached)?;
    std::fs::write(out.join(LIST), list).context("writing the offline file list")?;

    let single = single_file(&files)?;
    let single_file = out.join("forefield.html");
    std::fs::write(&single_file, &single)
        .with_context(|| format!("writing {}", single_file.display()))?;
    Ok(Published {
        files: files.len() + 2,
        version,
        single_file,
        single_file_bytes: single.len(),
    })
}

/// Every file under `from` by its `/`-separated relative path, in a stable order. The
/// benchmark's grids and hidden files are not part of the page.
fn page_files(from: &Path) -> Result<BTreeMap<String, Vec<u8>>> {
    let mut files = BTreeMap::new();
    let mut stack = vec![from.to_path_buf()];
    while let Some(dir) = stack.pop() {
        let entries =
            std::fs::read_dir(&dir).with_context(|| format!("reading {}", dir.display()))?;
        for entry in entries {
            let path = entry?.path();
            let name = path.file_name().and_then(|n| n.to_str()).unwrap_or("");
            if name.starts_with('.') || name == "bench-grids" {
                continue;
            }
            if path.is_dir() {
                stack.push(path);
                continue;
            }
            let relative = path
                .strip_prefix(from)
                .expect("walked from `from`")
                .components()
                .map(|c| c.as_os_str().to_string_lossy().into_owned())
                .collect::<Vec<_>>()
                .join("/");
            let bytes =
                std::fs::read(&path).with_context(|| format!("reading {}", path.display()))?;
            files.insert(relative, bytes);
        }
    }
    Ok(files)
}

/// Short hash of every path and byte: a new build gets a new offline cache.
fn version(files: &BTreeMap<String, Vec<u8>>) -> String {
    let mut hash = Sha256::new();
    for (path, bytes) in files {
        hash.update(path.as_bytes());
        hash.update([0]);
        hash.update((bytes.len() as u64).to_le_bytes());
        hash.update(bytes);
    }
    hash.finalize()[..8].iter().fold(String::new(), |mut s, b| {
        let _ = write!(s, "{b:02x}");
        s
    })
}

/// Empties `out` when it is a previous published folder; refuses any other non-empty folder.
fn prepare_out(out: &Path) -> Result<()> {
    if out.exists() {
        let empty = std::fs::read_dir(out)
            .with_context(|| format!("reading {}", out.display()))?
            .next()
            .is_none();
        if !empty && !out.join(LIST).is_file() {
            bail!(
                "{} is not empty and was not written by forefield dist; choose another folder",
                out.display()
            );
        }
        std::fs::remove_dir_all(out).with_context(|| format!("clearing {}", out.display()))?;
    }
    std::fs::create_dir_all(out).with_context(|| format!("creating {}", out.display()))
}

fn text<'a>(files: &'a BTreeMap<String, Vec<u8>>, path: &str) -> Result<&'a str> {
    std::str::from_utf8(&files[path]).with_context(|| format!("{path} is not UTF-8"))
}

fn insert_after(text: &str, anchor: &str, insert: &str) -> Result<String> {
    let at = text
        .find(anchor)
        .with_context(|| format!("has no {anchor}"))?
        + anchor.len();
    Ok(format!("{}{insert}{}", &text[..at], &text[at..]))
}

fn replace_once(text: &str, old: &str, new: &str) -> Result<String> {
    match text.matches(old).count() {
        1 => Ok(text.replacen(old, new, 1)),
        n => bail!("index.html has {n} copies of {old}, expected one"),
    }
}

/// The CSP source for an inline block: `sha256-` and the base64 digest of its exact text.
fn csp_hash(text: &str) -> String {
    format!("sha256-{}", BASE64.encode(Sha256::digest(text.as_bytes())))
}

/// The one-file page: index.html with its style sheet and icon inlined, its module script
/// replaced by the carried files and the start-up, and the one-file policy.
fn single_file(files: &BTreeMap<String, Vec<u8>>) -> Result<String> {
    let mut page = text(files, "index.html")?.to_string();

    let policy_start = "<meta http-equiv=\"Content-Security-Policy\" content=\"";
    let start = page
        .find(policy_start)
        .context("index.html has no Content-Security-Policy to replace")?;
    let end = start
        + page[start..]
            .find("\">")
            .context("index.html's Content-Security-Policy is not closed")?
        + 2;
    let style = text(files, "style.css")?;
    if style.contains("</style") {
        bail!("style.css contains </style and cannot be inlined");
    }
    let policy = single_file_policy(&csp_hash(BOOT), &csp_hash(style));
    page.replace_range(start..end, &format!("{policy_start}{policy}\">"));

    page = replace_once(
        &page,
        "<link rel=\"stylesheet\" href=\"style.css\">",
        &format!("<style>{style}</style>"),
    )?;
    page = replace_once(
        &page,
        "<script type=\"module\" src=\"main.js\"></script>\n",
        "",
    )?;
    if let Some(icon) = files.get("favicon.svg") {
        let data = format!("\"data:image/svg+xml;base64,{}\"", BASE64.encode(icon));
        page = page.replace("\"favicon.svg\"", &data);
    }

    let mut modules = serde_json::Map::new();
    let mut data = serde_json::Map::new();
    let mut workers = serde_json::Map::new();
    let worker = format!("{}\n{}", text(files, WORKER_GLUE)?, text(files, WORKER)?);
    workers.insert(WORKER.into(), worker.into());
    for (path, bytes) in files {
        match path.rsplit('.').next() {
            Some("js") if !matches!(path.as_str(), "sw.js" | WORKER | WORKER_GLUE) => {
                modules.insert(path.clone(), text(files, path)?.into());
            }
            Some("wasm" | "tif" | "tiff" | "json" | "geojson") => {
                data.insert(
                    path.clone(),
                    serde_json::json!([mime_type(Path::new(path)), BASE64.encode(bytes)]),
                );
            }
            _ => {}
        }
    }
    let carried = serde_json::json!({ "modules": modules, "workers": workers, "files": data });
    // `<` escaped keeps any `</script` inside the carried text from closing the block.
    let carried = serde_json::to_string(&carried)?.replace('<', "\\u003c");
    let scripts = format!(
        "<script type=\"application/json\" id=\"forefield-files\">{carried}</script>\n\
         <script type=\"module\">{BOOT}</script>\n</body>"
    );
    replace_once(&page, "</body>", &scripts)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn page() -> BTreeMap<String, Vec<u8>> {
        let mut files = BTreeMap::new();
        let index = "<!doctype html>\n<html><head>\n<meta charset=\"utf-8\">\n\
            <meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'self'\">\n\
            <link rel=\"icon\" href=\"favicon.svg\">\n<link rel=\"stylesheet\" href=\"style.css\">\n\
            <script type=\"module\" src=\"main.js\"></script>\n</head><body><img src=\"favicon.svg\">\n</body></html>\n";
        files.insert("index.html".into(), index.into());
        files.insert("style.css".into(), b"body { margin: 0 }".to_vec());
        files.insert("favicon.svg".into(), b"<svg/>".to_vec());
        files.insert(
            "main.js".into(),
            b"import { a } from './files.js'; // </script>".to_vec(),
        );
        files.insert("files.js".into(), b"export const a = 1;".to_vec());
        files.insert("sw.js".into(), b"self.x = 1;".to_vec());
        files.insert(WORKER.into(), b"onmessage = run;".to_vec());
        files.insert(WORKER_GLUE.into(), b"let wasm_bindgen = 1;".to_vec());
        files.insert("pkg/forefield_wasm_bg.wasm".into(), vec![0, 97, 115, 109]);
        files
    }

    #[test]
    fn the_single_file_carries_everything_and_admits_only_its_own_blocks() {
        let html = single_file(&page()).unwrap();
        assert!(!html.contains("href=\"style.css\"") && !html.contains("src=\"main.js\""));
        assert!(!html.contains("\"favicon.svg\""));
        assert!(html.contains("<style>body { margin: 0 }</style>"));
        // The carried text cannot close its block early: one </script> per block.
        assert_eq!(html.matches("</script>").count(), 2);
        assert!(html.contains("\"pkg/forefield_wasm_bg.wasm\":[\"application/wasm\",\"AGFzbQ==\"]"));
        assert!(
            !html.contains("self.x"),
            "the service worker is not part of the one file"
        );
        // Modules as text, the worker after its glue as one classic script, data as base64.
        let block = html
            .split("id=\"forefield-files\">")
            .nth(1)
            .and_then(|rest| rest.split("</script>").next())
            .unwrap();
        let carried: serde_json::Value = serde_json::from_str(block).unwrap();
        let keys = |name: &str| -> Vec<String> {
            carried[name].as_object().unwrap().keys().cloned().collect()
        };
        assert_eq!(keys("modules"), ["files.js", "main.js"]);
        assert_eq!(keys("workers"), ["worker.js"]);
        assert_eq!(keys("files"), ["pkg/forefield_wasm_bg.wasm"]);
        assert_eq!(
            carried["workers"]["worker.js"],
            "let wasm_bindgen = 1;\nonmessage = run;"
        );
        assert_eq!(
            carried["modules"]["main.js"],
            "import { a } from './files.js'; // </script>"
        );
        // The policy's hashes are of the exact inline texts (CSP Level 3, section 8.4).
        let style_hash = csp_hash("body { margin: 0 }");
        assert!(html.contains(&format!("style-src '{style_hash}'")));
        assert!(html.contains(&format!("script-src '{}'", csp_hash(BOOT))));
        assert!(html.contains(&format!("<script type=\"module\">{BOOT}</script>")));
        assert!(!html.contains("'self'"));
    }

    #[test]
    fn a_known_digest() {
        // FIPS 180-2 appendix B.1: SHA-256("abc") = ba7816bf...f20015ad, which is
        // ungWv48Bz+pBQUDeXa4iI7ADYaOWF3qctBD/YfIAFa0= in base64.
        assert_eq!(
            csp_hash("abc"),
            "sha256-ungWv48Bz+pBQUDeXa4iI7ADYaOWF3qctBD/YfIAFa0="
        );
    }

    #[test]
    fn refuses_to_clear_a_folder_it_did_not_write() {
        let dir = std::env::temp_dir().join(format!("forefield-dist-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        std::fs::write(dir.join("notes.txt"), "keep me").unwrap();
        let error = prepare_out(&dir).unwrap_err().to_string();
        assert!(error.contains("not written by forefield dist"), "{error}");
        assert!(dir.join("notes.txt").is_file());
        std::fs::remove_dir_all(&dir).unwrap();
    }
}
