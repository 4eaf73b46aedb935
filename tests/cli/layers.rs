//! The library's modules depend on each other one way, layer by layer, as DEVELOPERS.md's
//! table says: read from the `use crate::...` paths of `src/` (comments and inline test
//! modules left out), every module may use only modules of earlier layers.

use std::collections::BTreeSet;
use std::path::Path;

/// DEVELOPERS.md's layers, in order.
const LAYERS: &[&[&str]] = &[
    &["expr", "interval", "budget", "output", "plot"],
    &["parse", "jet", "canon", "binary"],
    &["zero", "tensor", "tape", "pointwise"],
    &["claim"],
    &["problem"],
    &["grid", "adm"],
    &["audit"],
    &["check"],
    &["tt"],
    &["gauge"],
    &["detector", "radiation"],
    &["export"],
    &["emit"],
];

fn layer_of(module: &str) -> Option<usize> {
    LAYERS.iter().position(|l| l.contains(&module))
}

/// The source of a module without comments and without an inline `mod tests { ... }`.
fn code(path: &Path) -> String {
    let text = std::fs::read_to_string(path).unwrap();
    let text = match text.find("#[cfg(test)]\nmod tests {") {
        Some(i) => &text[..i],
        None => &text,
    };
    text.lines()
        .filter(|l| !l.trim_start().starts_with("//"))
        .collect::<Vec<_>>()
        .join("\n")
}

/// The crate modules named in `text` (`crate::name`, `crate::{a, b::c}`).
fn uses(text: &str) -> BTreeSet<String> {
    let mut out = BTreeSet::new();
    let ident = |s: &str| -> String {
        s.chars()
            .take_while(|c| c.is_ascii_alphanumeric() || *c == '_')
            .collect()
    };
    for (i, _) in text.match_indices("crate::") {
        let rest = &text[i + "crate::".len()..];
        if let Some(group) = rest.strip_prefix('{') {
            let end = group.find('}').unwrap_or(group.len());
            for item in group[..end].split(',') {
                let name = ident(item.trim());
                if !name.is_empty() && name != "self" {
                    out.insert(name);
                }
            }
        } else {
            out.insert(ident(rest));
        }
    }
    out
}

fn files(dir: &Path, out: &mut Vec<std::path::PathBuf>) {
    for e in std::fs::read_dir(dir).unwrap() {
        let p = e.unwrap().path();
        let name = p.file_name().unwrap().to_string_lossy().to_string();
        if p.is_dir() {
            if name != "tests" {
                files(&p, out);
            }
        } else if name.ends_with(".rs") && name != "tests.rs" {
            out.push(p);
        }
    }
}

#[test]
fn modules_use_only_earlier_layers() {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let mut seen = BTreeSet::new();
    let mut wrong = Vec::new();
    for e in std::fs::read_dir(&src).unwrap() {
        let p = e.unwrap().path();
        let name = p.file_name().unwrap().to_string_lossy().to_string();
        let module = name.trim_end_matches(".rs").to_string();
        if ["lib", "main", "cli"].contains(&module.as_str()) {
            continue;
        }
        let Some(layer) = layer_of(&module) else {
            wrong.push(format!(
                "`{module}` is in no layer of DEVELOPERS.md's table"
            ));
            continue;
        };
        seen.insert(module.clone());
        let mut sources = Vec::new();
        if p.is_dir() {
            files(&p, &mut sources);
        } else {
            sources.push(p.clone());
        }
        for f in sources {
            for used in uses(&code(&f)) {
                if used == module {
                    continue;
                }
                match layer_of(&used) {
                    Some(l) if l < layer => {}
                    _ => wrong.push(format!(
                        "{} (layer {layer}) uses `{used}`",
                        f.strip_prefix(&src).unwrap().display()
                    )),
                }
            }
        }
    }
    assert!(wrong.is_empty(), "{}", wrong.join("\n"));
    // The audit is the independent route: it never sees canonical forms.
    let mut audit = Vec::new();
    files(&src.join("audit"), &mut audit);
    for f in audit {
        assert!(
            !uses(&code(&f)).contains("canon"),
            "{} uses canon",
            f.display()
        );
    }
    assert!(seen.len() >= 20, "only {} modules found", seen.len());
}

#[test]
fn the_reader_finds_grouped_and_nested_paths() {
    let u = uses("use crate::{canon::Form, tensor};\nlet x = crate::zero::decide(y);");
    let got: Vec<&str> = u.iter().map(String::as_str).collect();
    assert_eq!(got, ["canon", "tensor", "zero"]);
    // A comment is not a use.
    assert!(code_of("// crate::grid\nfn f() {}").is_empty());
}

fn code_of(text: &str) -> BTreeSet<String> {
    let cleaned: String = text
        .lines()
        .filter(|l| !l.trim_start().starts_with("//"))
        .collect::<Vec<_>>()
        .join("\n");
    uses(&cleaned)
}
