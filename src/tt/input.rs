//! Command-line pieces that hold expressions: comma-separated lists (`3/5,0,4/5`,
//! `theta=pi/3,phi=0`, `xi_t, xi_x, xi_y, xi_z`), parsed and built with a problem's names.
//!
//! Design decision: an argument is treated like a tiny source file. Every error carries the
//! argument's text and a span into it, so it renders with a caret under the offending piece,
//! exactly as an error inside a problem file does.

use crate::canon::{Form, Names, Store};
use crate::expr::Span;
use miette::NamedSource;
use std::sync::Arc;

/// An error in a command-line argument, pointing into it.
#[derive(Debug, Clone, thiserror::Error, miette::Diagnostic)]
#[error("{message}")]
pub struct ArgError {
    /// One line saying what is wrong.
    pub message: String,
    /// Where in the argument.
    #[label("{label}")]
    pub span: Span,
    /// Short text shown at the span.
    pub label: String,
    /// How to fix it.
    #[help]
    pub help: Option<String>,
    /// The argument's name (e.g. `--direction`) and text.
    #[source_code]
    pub source_code: Arc<NamedSource<String>>,
}

impl ArgError {
    /// An error at `span` of the argument `name` whose text is `text`.
    #[must_use]
    pub fn new(
        name: &str,
        text: &str,
        message: impl Into<String>,
        span: Span,
        label: impl Into<String>,
    ) -> ArgError {
        // A trailing space gives a label at the very end of the text a place to be drawn.
        let end = text.len();
        let span = Span::new(
            span.start.min(end),
            span.end.min(end).max(span.start.min(end)),
        );
        ArgError {
            message: message.into(),
            span,
            label: label.into(),
            help: None,
            source_code: Arc::new(NamedSource::new(name, format!("{text} "))),
        }
    }

    /// An error about the whole argument.
    #[must_use]
    pub fn whole(name: &str, text: &str, message: impl Into<String>) -> ArgError {
        ArgError::new(
            name,
            text,
            message,
            Span::new(0, text.len()),
            "this argument",
        )
    }

    /// The same error with a help line.
    #[must_use]
    pub fn with_help(mut self, help: impl Into<String>) -> ArgError {
        self.help = Some(help.into());
        self
    }
}

/// One piece of a comma-separated argument: its trimmed text and where it starts.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Piece {
    /// The text, without surrounding whitespace.
    pub text: String,
    /// Byte offset of `text` in the whole argument.
    pub offset: usize,
}

impl Piece {
    /// The span of this piece in the whole argument.
    #[must_use]
    pub fn span(&self) -> Span {
        Span::new(self.offset, self.offset + self.text.len())
    }
}

/// An argument: its name (for messages) and text.
#[derive(Clone, Copy, Debug)]
pub struct Arg<'a> {
    /// The option's name, e.g. `--direction`.
    pub name: &'a str,
    /// What the user wrote.
    pub text: &'a str,
}

impl<'a> Arg<'a> {
    /// An argument called `name` with text `text`.
    #[must_use]
    pub fn new(name: &'a str, text: &'a str) -> Arg<'a> {
        Arg { name, text }
    }

    /// An error at `span`.
    #[must_use]
    pub fn error(
        &self,
        message: impl Into<String>,
        span: Span,
        label: impl Into<String>,
    ) -> ArgError {
        ArgError::new(self.name, self.text, message, span, label)
    }

    /// Splits at the commas outside parentheses; every piece must be nonempty.
    ///
    /// # Errors
    ///
    /// An empty argument, an empty piece, or unbalanced parentheses.
    pub fn split(&self) -> Result<Vec<Piece>, ArgError> {
        let text = self.text;
        if text.trim().is_empty() {
            return Err(self.error("empty argument", Span::new(0, text.len()), "nothing here"));
        }
        let mut pieces = Vec::new();
        let mut depth = 0i32;
        let mut start = 0usize;
        let mut cuts = Vec::new();
        for (i, c) in text.char_indices() {
            match c {
                '(' => depth += 1,
                ')' => {
                    depth -= 1;
                    if depth < 0 {
                        return Err(self.error("unmatched `)`", Span::new(i, i + 1), "here"));
                    }
                }
                ',' if depth == 0 => {
                    cuts.push((start, i));
                    start = i + 1;
                }
                _ => {}
            }
        }
        if depth > 0 {
            return Err(self
                .error("unclosed `(`", Span::new(0, text.len()), "in here")
                .with_help("close every `(` with a `)`"));
        }
        cuts.push((start, text.len()));
        for (a, b) in cuts {
            let raw = &text[a..b];
            let lead = raw.len() - raw.trim_start().len();
            let piece = raw.trim();
            if piece.is_empty() {
                let at = if a < b {
                    Span::new(a, b)
                } else {
                    Span::new(a, a)
                };
                return Err(self
                    .error("empty entry in the list", at, "nothing here")
                    .with_help("entries are separated by single commas"));
            }
            pieces.push(Piece {
                text: piece.to_string(),
                offset: a + lead,
            });
        }
        Ok(pieces)
    }

    /// Splits into exactly `n` pieces.
    ///
    /// # Errors
    ///
    /// As [`Arg::split`], or a different number of pieces, with `what` saying what is expected.
    pub fn split_exact(&self, n: usize, what: &str) -> Result<Vec<Piece>, ArgError> {
        let pieces = self.split()?;
        if pieces.len() != n {
            return Err(self
                .error(
                    format!(
                        "expected {n} comma-separated entries, found {}",
                        pieces.len()
                    ),
                    Span::new(0, self.text.len()),
                    "this list",
                )
                .with_help(what.to_string()));
        }
        Ok(pieces)
    }

    /// Parses and builds one piece with `names`, errors pointing into the argument.
    ///
    /// # Errors
    ///
    /// A parse error or a build error (an undeclared name, say), at its place in the argument.
    pub fn build(&self, store: &mut Store, names: &Names, piece: &Piece) -> Result<Form, ArgError> {
        let e = crate::parse::parse(&piece.text).map_err(|pe| {
            let pe = pe.shifted(piece.offset);
            let mut err = self.error(pe.message, pe.span, pe.label);
            err.help = pe.help;
            err
        })?;
        store.build(&e, names).map_err(|be| {
            let mut err = self.error(be.message, be.span.shifted(piece.offset), "here");
            err.help = be.help;
            err
        })
    }

    /// Builds a piece that must not depend on the coordinates t, x, y, z.
    ///
    /// # Errors
    ///
    /// As [`Arg::build`], or a coordinate in the piece.
    pub fn build_constant(
        &self,
        store: &mut Store,
        names: &Names,
        piece: &Piece,
    ) -> Result<Form, ArgError> {
        let f = self.build(store, names, piece)?;
        if let Some(c) = coordinates_in(store, f).first() {
            return Err(self
                .error(
                    format!("this entry depends on the coordinate `{c}`"),
                    piece.span(),
                    "not a constant",
                )
                .with_help("use numbers, pi and the file's parameters here"));
        }
        Ok(f)
    }
}

/// The coordinates (t, x, y, z) that `f` depends on, in that order.
pub fn coordinates_in(store: &mut Store, f: Form) -> Vec<&'static str> {
    let syms = store.free_symbols(f);
    crate::tensor::COORDS
        .into_iter()
        .filter(|c| syms.iter().any(|s| &**s == *c))
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn split(text: &str) -> Result<Vec<String>, String> {
        Arg::new("--test", text)
            .split()
            .map(|v| v.into_iter().map(|p| p.text).collect())
            .map_err(|e| e.message)
    }

    #[test]
    fn splits_at_top_level_commas_only() {
        assert_eq!(split("3/5, 0 ,4/5").unwrap(), ["3/5", "0", "4/5"]);
        assert_eq!(split("sin(a), cos(b)").unwrap(), ["sin(a)", "cos(b)"]);
        assert_eq!(split("x").unwrap(), ["x"]);
    }

    #[test]
    fn reports_empty_and_unbalanced_pieces() {
        assert!(split("1,,2").unwrap_err().contains("empty entry"));
        assert!(split("1,2,").unwrap_err().contains("empty entry"));
        assert!(split("  ").unwrap_err().contains("empty argument"));
        assert!(split("sin(1,2").unwrap_err().contains("unclosed"));
        assert!(split("1),2").unwrap_err().contains("unmatched"));
    }

    #[test]
    fn offsets_point_into_the_argument() {
        let v = Arg::new("--t", "a,  bb").split().unwrap();
        assert_eq!(v[1].offset, 4);
        assert_eq!(v[1].span(), Span::new(4, 6));
    }
}
