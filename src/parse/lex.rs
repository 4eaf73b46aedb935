//! The lexer: source text to a vector of tokens, each with its byte span.
//!
//! Design decision: the whole input is tokenized before parsing starts, and every character
//! the language does not use is rejected here, so the parser only ever sees well-formed
//! tokens. Numbers are read exactly into rationals; nothing passes through floating point.

use super::ParseError;
use crate::expr::Span;
use num_bigint::BigInt;
use num_rational::BigRational;
use num_traits::Zero;

/// Largest accepted magnitude of a written decimal exponent (`1e10000`). Beyond this the exact
/// value would take unbounded time and memory to build.
pub(crate) const MAX_EXPONENT: u64 = 10_000;

/// What a token is.
#[derive(Clone, Debug, PartialEq)]
pub(crate) enum TokKind {
    /// A number, already exact.
    Num(BigRational),
    /// A name with the count of `'` marks written directly after it.
    Ident {
        /// The name without its primes.
        name: String,
        /// How many `'` follow the name.
        primes: u32,
    },
    Plus,
    Minus,
    Star,
    Slash,
    Caret,
    LParen,
    RParen,
    Comma,
    /// End of input; its span is empty and sits at the end of the text.
    Eof,
}

/// A token and where it stands.
#[derive(Clone, Debug, PartialEq)]
pub(crate) struct Token {
    pub(crate) kind: TokKind,
    pub(crate) span: Span,
}

/// Splits `src` into tokens, ending with exactly one [`TokKind::Eof`].
pub(crate) fn tokenize(src: &str) -> Result<Vec<Token>, ParseError> {
    let bytes = src.as_bytes();
    // A token takes at least one byte, and written polynomials take about three per token:
    // reserving a third of the length up front saves most regrowing (and its copies) of a
    // long text's token list.
    let mut toks = Vec::with_capacity(src.len() / 3 + 2);
    let mut i = 0;
    while i < bytes.len() {
        let b = bytes[i];
        let single = |kind| Token {
            kind,
            span: Span::new(i, i + 1),
        };
        match b {
            b'0'..=b'9' | b'.' => {
                let (kind, end) = number(src, i)?;
                toks.push(Token {
                    kind,
                    span: Span::new(i, end),
                });
                i = end;
            }
            b'A'..=b'Z' | b'a'..=b'z' | b'_' => {
                let mut end = i;
                while end < bytes.len()
                    && (bytes[end].is_ascii_alphanumeric() || bytes[end] == b'_')
                {
                    end += 1;
                }
                let name = src[i..end].to_string();
                let mut primes: u32 = 0;
                while end < bytes.len() && bytes[end] == b'\'' {
                    primes = primes.checked_add(1).ok_or_else(|| {
                        ParseError::new("too many primes", Span::new(i, end), "here")
                    })?;
                    end += 1;
                }
                toks.push(Token {
                    kind: TokKind::Ident { name, primes },
                    span: Span::new(i, end),
                });
                i = end;
            }
            b'+' => {
                toks.push(single(TokKind::Plus));
                i += 1;
            }
            b'-' => {
                toks.push(single(TokKind::Minus));
                i += 1;
            }
            b'*' if bytes.get(i + 1) == Some(&b'*') => {
                return Err(ParseError::new(
                    "`**` is not an operator",
                    Span::new(i, i + 2),
                    "not an operator",
                )
                .with_help("use `^` for powers, e.g. `x^2`"));
            }
            b'*' => {
                toks.push(single(TokKind::Star));
                i += 1;
            }
            b'/' => {
                toks.push(single(TokKind::Slash));
                i += 1;
            }
            b'^' => {
                toks.push(single(TokKind::Caret));
                i += 1;
            }
            b'(' => {
                toks.push(single(TokKind::LParen));
                i += 1;
            }
            b')' => {
                toks.push(single(TokKind::RParen));
                i += 1;
            }
            b',' => {
                toks.push(single(TokKind::Comma));
                i += 1;
            }
            b'\'' => {
                return Err(ParseError::new(
                    "a prime `'` must directly follow a function name",
                    Span::new(i, i + 1),
                    "not attached to a name",
                )
                .with_help("write `F'(x)` for the derivative of `F` at `x`, with no space"));
            }
            b'=' => {
                let len = if bytes.get(i + 1) == Some(&b'=') {
                    2
                } else {
                    1
                };
                return Err(ParseError::new(
                    format!("unexpected `{}`", &src[i..i + len]),
                    Span::new(i, i + len),
                    "not allowed in an expression",
                )
                .with_help("an expression cannot contain `=`; write a single expression"));
            }
            _ => {
                // Safe: `i` always sits on a char boundary, since every arm above advances
                // past ASCII bytes only and this arm advances by a whole char.
                let c = src[i..].chars().next().unwrap_or('\u{fffd}');
                if c.is_whitespace() {
                    i += c.len_utf8();
                    continue;
                }
                return Err(unexpected_char(c, i));
            }
        }
    }
    toks.push(Token {
        kind: TokKind::Eof,
        span: Span::new(src.len(), src.len()),
    });
    Ok(toks)
}

/// The error for a character the language does not use, with a hint for common look-alikes.
fn unexpected_char(c: char, at: usize) -> ParseError {
    let shown: String = if c.is_control() {
        c.escape_debug().collect()
    } else {
        c.to_string()
    };
    let help = match c {
        '[' | ']' | '{' | '}' => Some("use `(` and `)` for grouping".to_string()),
        '×' | '·' | '∙' | '⋅' => Some("write `*` for multiplication".to_string()),
        '÷' => Some("write `/` for division".to_string()),
        '−' | '–' | '—' => Some("write the ASCII minus `-`".to_string()),
        '²' => Some("write `^2` for a square".to_string()),
        '³' => Some("write `^3` for a cube".to_string()),
        'π' => Some("write `pi`".to_string()),
        '’' | '′' => Some("write the ASCII prime `'`, e.g. `F'(x)`".to_string()),
        c if c.is_alphabetic() => {
            Some("names use ASCII letters, digits and `_` only, e.g. `alpha`".to_string())
        }
        _ => None,
    };
    let err = ParseError::new(
        format!("unexpected character `{shown}`"),
        Span::new(at, at + c.len_utf8()),
        "not part of the expression language",
    );
    match help {
        Some(h) => err.with_help(h),
        None => err,
    }
}

/// Reads the number starting at byte `start` (a digit or `.`): `12`, `1.5`, `.5`, `1.`,
/// `1.5e-3`, `2E4`. Returns its exact value and the byte after it.
///
/// An `e` directly after the digits starts an exponent only when a digit (after an optional
/// sign) follows it; `2ex` is the number `2` followed by the name `ex`, which the parser then
/// reports as a missing operator.
fn number(src: &str, start: usize) -> Result<(TokKind, usize), ParseError> {
    let bytes = src.as_bytes();
    let digits_from = |mut i: usize| {
        while i < bytes.len() && bytes[i].is_ascii_digit() {
            i += 1;
        }
        i
    };
    let int_end = digits_from(start);
    let (frac_start, frac_end) = if bytes.get(int_end) == Some(&b'.') {
        (int_end + 1, digits_from(int_end + 1))
    } else {
        (int_end, int_end)
    };
    if int_end == start && frac_end == frac_start {
        return Err(ParseError::new(
            "a number needs at least one digit",
            Span::new(start, frac_end.max(start + 1)),
            "no digits",
        )
        .with_help("write `0.5` or `.5`, not a lone `.`"));
    }
    let mut end = frac_end;
    let mut exponent: i64 = 0;
    if matches!(bytes.get(end), Some(b'e' | b'E')) {
        let mut j = end + 1;
        let negative = bytes.get(j) == Some(&b'-');
        if matches!(bytes.get(j), Some(b'+' | b'-')) {
            j += 1;
        }
        let exp_end = digits_from(j);
        if exp_end > j {
            let mut magnitude: u64 = 0;
            for &d in &bytes[j..exp_end] {
                magnitude = (magnitude * 10 + u64::from(d - b'0')).min(MAX_EXPONENT + 1);
            }
            if magnitude > MAX_EXPONENT {
                return Err(ParseError::new(
                    "exponent too large",
                    Span::new(start, exp_end),
                    "this number",
                )
                .with_help(format!(
                    "decimal exponents are limited to at most {MAX_EXPONENT} in magnitude"
                )));
            }
            // Fits: magnitude <= MAX_EXPONENT.
            exponent = if negative {
                -(magnitude as i64)
            } else {
                magnitude as i64
            };
            end = exp_end;
        } else {
            let followed_by_name = j == end + 1
                && bytes
                    .get(j)
                    .is_some_and(|b| b.is_ascii_alphabetic() || *b == b'_');
            if !followed_by_name {
                return Err(ParseError::new(
                    "missing digits in exponent",
                    Span::new(start, j),
                    "exponent without digits",
                )
                .with_help("write e.g. `1.5e-3`"));
            }
        }
    }
    let frac_len = i64::try_from(frac_end - frac_start).unwrap_or(i64::MAX);
    let scale = exponent.saturating_sub(frac_len);
    let value = exact_value(&src[start..int_end], &src[frac_start..frac_end], scale);
    Ok((TokKind::Num(value), end))
}

/// The exact value of the decimal digits `int` followed by `frac`, times `10^scale`.
///
/// A mantissa of at most 19 digits (every literal a person writes) is read into a `u64`
/// (`10^19 - 1 < 2^64`) instead of through a digit string and a big-integer parse, and a
/// scale of 0 multiplies by nothing; [`exact_value_general`] is the same value by the long
/// road (the tests compare the two).
fn exact_value(int: &str, frac: &str, scale: i64) -> BigRational {
    if int.len() + frac.len() > 19 {
        return exact_value_general(int, frac, scale);
    }
    let mut m: u64 = 0;
    for &d in int.as_bytes().iter().chain(frac.as_bytes()) {
        m = m * 10 + u64::from(d - b'0');
    }
    if m == 0 {
        return BigRational::zero();
    }
    let mantissa = BigInt::from(m);
    if scale == 0 {
        return BigRational::from_integer(mantissa);
    }
    let power = num_traits::pow(BigInt::from(10), scale.unsigned_abs() as usize);
    if scale > 0 {
        BigRational::from_integer(mantissa * power)
    } else {
        BigRational::new(mantissa, power)
    }
}

/// [`exact_value`] through a digit string and a big-integer parse, for any length.
fn exact_value_general(int: &str, frac: &str, scale: i64) -> BigRational {
    let mut digits = String::with_capacity(int.len() + frac.len());
    digits.push_str(int);
    digits.push_str(frac);
    let mantissa = if digits.is_empty() {
        BigInt::zero()
    } else {
        // Only ASCII digits were collected, so this cannot fail.
        BigInt::parse_bytes(digits.as_bytes(), 10).unwrap_or_default()
    };
    if mantissa.is_zero() {
        return BigRational::zero();
    }
    let power = |k: i64| num_traits::pow(BigInt::from(10), k.unsigned_abs() as usize);
    if scale >= 0 {
        BigRational::from_integer(mantissa * power(scale))
    } else {
        BigRational::new(mantissa, power(scale))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn num(src: &str) -> BigRational {
        match tokenize(src).map(|t| t.into_iter().next().map(|t| t.kind)) {
            Ok(Some(TokKind::Num(n))) => n,
            other => panic!("{src:?} did not lex to a number: {other:?}"),
        }
    }

    fn ratio(n: i64, d: i64) -> BigRational {
        BigRational::new(n.into(), d.into())
    }

    #[test]
    fn numbers_are_exact() {
        let table = [
            ("12", ratio(12, 1)),
            ("1.5", ratio(3, 2)),
            (".5", ratio(1, 2)),
            ("1.", ratio(1, 1)),
            ("1.5e-3", ratio(3, 2000)),
            ("2E4", ratio(20000, 1)),
            ("2e+2", ratio(200, 1)),
            ("0.1", ratio(1, 10)),
            ("000.000", ratio(0, 1)),
            ("0e5", ratio(0, 1)),
            ("25e-2", ratio(1, 4)),
        ];
        for (src, want) in table {
            assert_eq!(num(src), want, "{src}");
        }
        assert_eq!(
            num("1e10000"),
            BigRational::from_integer(num_traits::pow(BigInt::from(10), 10000))
        );
    }

    #[test]
    fn number_then_name_is_two_tokens() {
        let toks = tokenize("2ex").expect("lexes");
        assert_eq!(toks.len(), 3);
        assert_eq!(toks[0].span, Span::new(0, 1));
        assert_eq!(toks[1].span, Span::new(1, 3));
    }

    #[test]
    fn primes_attach_to_names() {
        let toks = tokenize("F''(u)").expect("lexes");
        assert_eq!(
            toks[0].kind,
            TokKind::Ident {
                name: "F".into(),
                primes: 2
            }
        );
        assert_eq!(toks[0].span, Span::new(0, 3));
    }

    #[test]
    fn huge_exponent_is_rejected_quickly() {
        let err = tokenize("1e999999999999999999999999").unwrap_err();
        assert_eq!(err.message, "exponent too large");
        assert_eq!(err.span, Span::new(0, 26));
    }

    proptest::proptest! {
        /// The short-mantissa road and the digit-string road give the same value, for
        /// mantissas on both sides of 19 digits and scales of both signs.
        #[test]
        fn short_mantissas_read_as_the_long_road_reads_them(
            int in "[0-9]{0,12}",
            frac in "[0-9]{0,12}",
            scale in -30i64..30,
        ) {
            proptest::prop_assert_eq!(
                exact_value(&int, &frac, scale),
                exact_value_general(&int, &frac, scale)
            );
        }
    }
}
