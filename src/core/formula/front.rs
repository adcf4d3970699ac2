//! The parser front: meval's tokens and postfix form checked, with every
//! rejection placed at its line and column.

use super::*;
use meval::tokenizer::{ParseError, Token};

impl Formula {
    /// Parse and compile `source`. Never panics; every rejection says what and where.
    pub fn compile(source: &str) -> Result<Formula, FormulaError> {
        if source.len() > MAX_SOURCE_BYTES {
            return Err(FormulaError::new(
                FormulaErrorKind::TooLong,
                format!(
                    "the formula is {} bytes long; at most {} are accepted",
                    source.len(),
                    MAX_SOURCE_BYTES
                ),
                None,
            ));
        }
        if let Some((i, ch)) = source.char_indices().find(|(_, c)| !c.is_ascii()) {
            return Err(FormulaError::new(
                FormulaErrorKind::Syntax,
                format!(
                    "the character '{ch}' (U+{:04X}) is not part of the formula language",
                    ch as u32
                ),
                Some(pos_of(source, i)),
            ));
        }
        if source.trim().is_empty() {
            return Err(FormulaError::new(
                FormulaErrorKind::Empty,
                "the formula is empty; write H in terms of q and p, e.g. p^2/2 + q^2/2".into(),
                None,
            ));
        }
        let tokens = meval::tokenizer::tokenize(source).map_err(|e| tokenizer_error(source, e))?;
        let spans = token_spans(source);
        let spans = if spans.len() == tokens.len() {
            Some(spans)
        } else {
            None
        };
        let token_pos = |i: usize| {
            spans
                .as_ref()
                .and_then(|s| s.get(i))
                .map(|&b| pos_of(source, b))
        };
        let rpn = meval::shunting_yard::to_rpn(&tokens).map_err(|e| {
            use meval::RPNError::*;
            let (msg, at) = match e {
                MismatchedLParen(i) => ("this '(' is never closed".to_string(), Some(i)),
                MismatchedRParen(i) => ("this ')' has no matching '('".to_string(), Some(i)),
                UnexpectedComma(i) => (
                    "a ',' may only separate a function's arguments".to_string(),
                    Some(i),
                ),
                NotEnoughOperands(i) => ("an operator is missing a value".to_string(), Some(i)),
                TooManyOperands => (
                    "two values stand side by side without an operator".to_string(),
                    None,
                ),
            };
            FormulaError::new(FormulaErrorKind::Syntax, msg, at.and_then(token_pos))
        })?;
        // Where each function call sits, in the order the postfix form emits
        // calls: the order in which their closing parentheses arrive.
        let mut open: Vec<Option<usize>> = Vec::new();
        let mut func_positions: Vec<Option<Pos>> = Vec::new();
        for (i, t) in tokens.iter().enumerate() {
            match t {
                Token::Func(..) => open.push(Some(i)),
                Token::LParen => open.push(None),
                Token::RParen => {
                    if let Some(Some(f)) = open.pop() {
                        func_positions.push(token_pos(f));
                    }
                }
                _ => {}
            }
        }
        Compiler::new(source, func_positions).run(&rpn)
    }
}

pub(super) fn pos_of(source: &str, byte: usize) -> Pos {
    let byte = byte.min(source.len());
    let before = &source.as_bytes()[..byte];
    let line = 1 + before.iter().filter(|&&b| b == b'\n').count();
    let line_start = before
        .iter()
        .rposition(|&b| b == b'\n')
        .map(|i| i + 1)
        .unwrap_or(0);
    let column = 1 + String::from_utf8_lossy(&before[line_start..])
        .chars()
        .count();
    Pos { line, column }
}

/// Byte offsets at which each meval token starts, by the same lexical rules
/// meval uses (numbers, identifiers, single-character symbols). Only used to
/// place messages; if it disagrees with meval's token count it is not used.
pub(super) fn token_spans(source: &str) -> Vec<usize> {
    let b = source.as_bytes();
    let mut out = Vec::new();
    let mut i = 0;
    while i < b.len() {
        let c = b[i];
        if c.is_ascii_whitespace() {
            i += 1;
        } else if c.is_ascii_digit() {
            out.push(i);
            while i < b.len() && b[i].is_ascii_digit() {
                i += 1;
            }
            if i < b.len() && b[i] == b'.' {
                i += 1;
                while i < b.len() && b[i].is_ascii_digit() {
                    i += 1;
                }
            }
            if i < b.len() && (b[i] == b'e' || b[i] == b'E') {
                let mut j = i + 1;
                if j < b.len() && (b[j] == b'+' || b[j] == b'-') {
                    j += 1;
                }
                if j < b.len() && b[j].is_ascii_digit() {
                    while j < b.len() && b[j].is_ascii_digit() {
                        j += 1;
                    }
                    i = j;
                }
            }
        } else if c.is_ascii_alphabetic() || c == b'_' {
            out.push(i);
            while i < b.len() && (b[i].is_ascii_alphanumeric() || b[i] == b'_') {
                i += 1;
            }
            // meval folds "name (" into one function token
            let mut j = i;
            while j < b.len() && b[j].is_ascii_whitespace() {
                j += 1;
            }
            if j < b.len() && b[j] == b'(' {
                i = j + 1;
            }
        } else {
            out.push(i);
            i += 1;
        }
    }
    out
}

pub(super) fn describe_char(c: u8) -> String {
    match c {
        b'\n' => "a line break".into(),
        c if c.is_ascii_control() => format!("the control character U+{c:04X}"),
        _ => format!("'{}'", c as char),
    }
}

pub(super) fn tokenizer_error(source: &str, e: ParseError) -> FormulaError {
    let b = source.as_bytes();
    let last_non_space = |end: usize| {
        b[..end.min(b.len())]
            .iter()
            .rposition(|c| !c.is_ascii_whitespace())
    };
    match e {
        ParseError::UnexpectedToken(at) => {
            let mut at = at.min(b.len());
            while at < b.len() && b[at].is_ascii_whitespace() {
                at += 1;
            }
            let found = b.get(at).copied();
            let prev = last_non_space(at).map(|i| b[i]);
            let found_txt = found.map(describe_char).unwrap_or_else(|| "the end".into());
            let msg = match prev {
                None => format!("expected a value at the start, found {found_txt}"),
                Some(pc) if b"+-*/^%(,".contains(&pc) => {
                    format!("expected a value after '{}', found {found_txt}", pc as char)
                }
                Some(pc) => match found {
                    Some(fc)
                        if fc.is_ascii_alphanumeric() || fc == b'_' || fc == b'(' || fc == b'.' =>
                    {
                        let prev_word = word_before(source, at);
                        format!(
                            "an operator is missing between '{}' and {found_txt} (write * for a product)",
                            if prev_word.is_empty() {
                                (pc as char).to_string()
                            } else {
                                prev_word
                            }
                        )
                    }
                    Some(b')') => "this ')' has no matching '('".to_string(),
                    Some(b',') => "a ',' may only separate a function's arguments".to_string(),
                    _ => format!("{found_txt} is not part of the formula language"),
                },
            };
            FormulaError::new(FormulaErrorKind::Syntax, msg, Some(pos_of(source, at)))
        }
        ParseError::MissingRParen(n) => FormulaError::new(
            FormulaErrorKind::Syntax,
            if n == 1 {
                "a ')' is missing at the end".to_string()
            } else {
                format!("{n} ')' are missing at the end")
            },
            Some(pos_of(source, source.trim_end().len())),
        ),
        ParseError::MissingArgument => {
            let end = source.trim_end().len();
            let msg = match last_non_space(end).map(|i| b[i]) {
                Some(pc) => format!(
                    "expected a value after '{}'; the formula ends there",
                    pc as char
                ),
                None => "the formula is empty".to_string(),
            };
            FormulaError::new(FormulaErrorKind::Syntax, msg, Some(pos_of(source, end)))
        }
    }
}

/// The first numeric literal in `source` that is too large for f64, with its position.
pub(super) fn first_huge_literal(source: &str) -> Option<(String, Pos)> {
    let b = source.as_bytes();
    token_spans(source).into_iter().find_map(|start| {
        if !b
            .get(start)
            .is_some_and(|c| c.is_ascii_digit() || *c == b'.')
        {
            return None;
        }
        let mut end = start;
        while end < b.len() && (b[end].is_ascii_alphanumeric() || b[end] == b'.') {
            end += 1;
        }
        // the literal may carry a signed exponent: 1e+400
        if end < b.len()
            && (b[end] == b'+' || b[end] == b'-')
            && b[end - 1].eq_ignore_ascii_case(&b'e')
        {
            end += 1;
            while end < b.len() && b[end].is_ascii_digit() {
                end += 1;
            }
        }
        let text = &source[start..end];
        let v: f64 = text.parse().ok()?;
        v.is_infinite()
            .then(|| (text.to_string(), pos_of(source, start)))
    })
}

/// Byte offset of `word` standing alone (not inside a longer identifier).
pub(super) fn find_word(source: &str, word: &str) -> Option<usize> {
    let b = source.as_bytes();
    let ident = |c: u8| c.is_ascii_alphanumeric() || c == b'_';
    source.match_indices(word).map(|(i, _)| i).find(|&i| {
        let before = i == 0 || !ident(b[i - 1]);
        let after = b.get(i + word.len()).is_none_or(|&c| !ident(c));
        before && after
    })
}

pub(super) fn word_before(source: &str, at: usize) -> String {
    let b = source.as_bytes();
    let mut end = at;
    while end > 0 && b[end - 1].is_ascii_whitespace() {
        end -= 1;
    }
    let mut start = end;
    while start > 0
        && (b[start - 1].is_ascii_alphanumeric() || b[start - 1] == b'_' || b[start - 1] == b'.')
    {
        start -= 1;
    }
    source[start..end].to_string()
}
