//! Map between places in a RON text and field paths (`planets[1].period`).
//!
//! ron reports a line and column for syntax and type errors but not the
//! field, and knows nothing of our physical-range checks, which run on the
//! typed values. This small scanner walks the text once, tolerating any
//! input (it never panics and needs no valid RON), and records where each
//! struct field and list element starts and ends. Hand-written because
//! ron exposes no spans for deserialised values.

use super::error::{FieldPath, PathSegment};

/// A token of the RON text: its kind and byte range.
#[derive(Debug, Clone, PartialEq)]
enum Tok {
    Open(char),
    Close,
    Colon,
    Comma,
    Ident(String),
    /// A string literal's contents (escapes left as written).
    Str(String),
    /// Anything else: numbers, `#`, `!`, stray characters.
    Other,
}

#[derive(Debug, Clone)]
struct Token {
    tok: Tok,
    start: usize,
}

fn is_ident_start(c: char) -> bool {
    c.is_alphabetic() || c == '_'
}

fn is_ident_char(c: char) -> bool {
    c.is_alphanumeric() || c == '_'
}

fn tokenize(src: &str) -> Vec<Token> {
    let chars: Vec<(usize, char)> = src.char_indices().collect();
    let n = chars.len();
    let at = |i: usize| chars.get(i).map(|&(_, c)| c);
    let mut out = Vec::new();
    let mut i = 0;
    while i < n {
        let (start, c) = chars[i];
        if c.is_whitespace() {
            i += 1;
        } else if c == '/' && at(i + 1) == Some('/') {
            while i < n && chars[i].1 != '\n' {
                i += 1;
            }
        } else if c == '/' && at(i + 1) == Some('*') {
            // Nested block comment.
            let mut depth = 0usize;
            while i < n {
                if chars[i].1 == '/' && at(i + 1) == Some('*') {
                    depth += 1;
                    i += 2;
                } else if chars[i].1 == '*' && at(i + 1) == Some('/') {
                    depth = depth.saturating_sub(1);
                    i += 2;
                    if depth == 0 {
                        break;
                    }
                } else {
                    i += 1;
                }
            }
        } else if c == '"' {
            i += 1;
            let mut text = String::new();
            while i < n && chars[i].1 != '"' {
                if chars[i].1 == '\\' {
                    text.push('\\');
                    i += 1;
                }
                if i < n {
                    text.push(chars[i].1);
                    i += 1;
                }
            }
            i += 1;
            out.push(Token {
                tok: Tok::Str(text),
                start,
            });
        } else if c == '\'' {
            i += 1;
            while i < n && chars[i].1 != '\'' {
                if chars[i].1 == '\\' {
                    i += 1;
                }
                i += 1;
            }
            i += 1;
            out.push(Token {
                tok: Tok::Other,
                start,
            });
        } else if is_ident_start(c) {
            let mut j = i;
            while j < n && is_ident_char(chars[j].1) {
                j += 1;
            }
            let word: String = chars[i..j].iter().map(|&(_, c)| c).collect();
            let next = at(j);
            if (word == "r" || word == "br") && matches!(next, Some('"') | Some('#')) {
                // Raw string r#"..."# (or raw identifier r#name).
                let mut k = j;
                let mut hashes = 0;
                while at(k) == Some('#') {
                    hashes += 1;
                    k += 1;
                }
                if at(k) == Some('"') {
                    k += 1;
                    let body_start = k;
                    loop {
                        if k >= n {
                            break;
                        }
                        if chars[k].1 == '"' && (1..=hashes).all(|h| at(k + h) == Some('#')) {
                            break;
                        }
                        k += 1;
                    }
                    let text: String = chars[body_start..k.min(n)]
                        .iter()
                        .map(|&(_, c)| c)
                        .collect();
                    i = (k + 1 + hashes).min(n);
                    out.push(Token {
                        tok: Tok::Str(text),
                        start,
                    });
                } else {
                    // Raw identifier.
                    let mut m = k;
                    while m < n && is_ident_char(chars[m].1) {
                        m += 1;
                    }
                    let name: String = chars[k..m].iter().map(|&(_, c)| c).collect();
                    i = m.max(k);
                    out.push(Token {
                        tok: Tok::Ident(name),
                        start,
                    });
                }
            } else {
                i = j;
                out.push(Token {
                    tok: Tok::Ident(word),
                    start,
                });
            }
        } else if c.is_ascii_digit()
            || ((c == '-' || c == '+' || c == '.')
                && at(i + 1).is_some_and(|d| d.is_ascii_digit() || d == '.' || d.is_alphabetic()))
        {
            i += 1;
            while i < n {
                let d = chars[i].1;
                let prev = chars[i - 1].1;
                if d.is_alphanumeric()
                    || d == '.'
                    || d == '_'
                    || ((d == '+' || d == '-') && (prev == 'e' || prev == 'E'))
                {
                    i += 1;
                } else {
                    break;
                }
            }
            out.push(Token {
                tok: Tok::Other,
                start,
            });
        } else {
            i += 1;
            let tok = match c {
                '(' | '[' | '{' => Tok::Open(c),
                ')' | ']' | '}' => Tok::Close,
                ':' => Tok::Colon,
                ',' => Tok::Comma,
                _ => Tok::Other,
            };
            out.push(Token { tok, start });
        }
    }
    out
}

/// Where one struct field or list element sits in the text.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Entry {
    /// Its path, e.g. `planets[1].period`.
    pub path: FieldPath,
    /// Byte offset of the key (field) or first token (element).
    pub start: usize,
    /// Byte offset just past the value (the following `,` or closer).
    pub end: usize,
    /// The value, if it is a string literal (used for planet names).
    pub string_value: Option<String>,
}

#[derive(Debug)]
struct Frame {
    kind: char,
    path: FieldPath,
    record: bool,
    index: usize,
    key: Option<String>,
    open: Option<usize>,
    expect_element: bool,
}

/// Scan `src` and list the place of every struct field and list element.
pub(crate) fn scan(src: &str) -> Vec<Entry> {
    let tokens = tokenize(src);
    let mut entries: Vec<Entry> = Vec::new();
    let mut stack: Vec<Frame> = vec![Frame {
        kind: 'r',
        path: FieldPath::default(),
        record: true,
        index: 0,
        key: None,
        open: None,
        expect_element: false,
    }];
    let mut skip_next_group = false;
    let close = |entries: &mut Vec<Entry>, frame: &mut Frame, end: usize| {
        if let Some(e) = frame.open.take() {
            if let Some(entry) = entries.get_mut(e) {
                entry.end = end;
            }
        }
    };

    for (t, token) in tokens.iter().enumerate() {
        let next = tokens.get(t + 1).map(|x| &x.tok);
        let Some(top) = stack.last_mut() else { break };
        // A new element of a list starts at its first token.
        if top.kind == '[' && top.expect_element && !matches!(token.tok, Tok::Close | Tok::Comma) {
            top.expect_element = false;
            if top.record {
                let mut path = top.path.clone();
                path.0.push(PathSegment::Index(top.index));
                entries.push(Entry {
                    path,
                    start: token.start,
                    end: src.len(),
                    string_value: None,
                });
                top.open = Some(entries.len() - 1);
            }
        }
        match &token.tok {
            Tok::Ident(name) if top.kind == '(' && next == Some(&Tok::Colon) => {
                close(&mut entries, top, token.start);
                top.key = Some(name.clone());
                if top.record {
                    let mut path = top.path.clone();
                    path.0.push(PathSegment::Field(name.clone()));
                    let string_value = match tokens.get(t + 2).map(|x| &x.tok) {
                        Some(Tok::Str(s)) => Some(s.clone()),
                        _ => None,
                    };
                    entries.push(Entry {
                        path,
                        start: token.start,
                        end: src.len(),
                        string_value,
                    });
                    top.open = Some(entries.len() - 1);
                }
            }
            Tok::Open(kind) => {
                let record = top.record && !skip_next_group;
                skip_next_group = false;
                let mut path = top.path.clone();
                match (top.kind, &top.key) {
                    ('(', Some(k)) => path.0.push(PathSegment::Field(k.clone())),
                    ('[', _) => path.0.push(PathSegment::Index(top.index)),
                    _ => {}
                }
                stack.push(Frame {
                    kind: if *kind == '{' { '{' } else { *kind },
                    path,
                    record,
                    index: 0,
                    key: None,
                    open: None,
                    expect_element: *kind == '[',
                });
            }
            Tok::Close => {
                // Never pop the root frame (stray closers are tolerated).
                let f = if stack.len() > 1 { stack.pop() } else { None };
                if let Some(mut f) = f {
                    close(&mut entries, &mut f, token.start);
                }
            }
            Tok::Comma => {
                close(&mut entries, top, token.start);
                top.key = None;
                if top.kind == '[' {
                    top.index += 1;
                    top.expect_element = true;
                }
            }
            Tok::Other if top.kind == 'r' && src.get(token.start..token.start + 1) == Some("#") => {
                // `#![enable(...)]` attribute: not part of the value.
                skip_next_group = true;
            }
            _ => {}
        }
    }
    while let Some(mut f) = stack.pop() {
        close(&mut entries, &mut f, src.len());
    }
    entries
}

/// The innermost recorded field or element containing byte `offset`.
pub(crate) fn path_at(entries: &[Entry], offset: usize) -> Option<&Entry> {
    entries
        .iter()
        .filter(|e| e.start <= offset && offset <= e.end)
        .max_by_key(|e| (e.path.0.len(), e.start))
}

/// The recorded place of `path`.
pub(crate) fn find<'a>(entries: &'a [Entry], path: &FieldPath) -> Option<&'a Entry> {
    entries.iter().find(|e| &e.path == path)
}

/// 1-based (line, column) of a byte offset, columns counted in characters
/// as ron counts them.
pub(crate) fn line_col(src: &str, offset: usize) -> (usize, usize) {
    let mut line = 1;
    let mut col = 1;
    for (i, c) in src.char_indices() {
        if i >= offset {
            break;
        }
        if c == '\n' {
            line += 1;
            col = 1;
        } else {
            col += 1;
        }
    }
    (line, col)
}

/// Byte offset of a 1-based (line, column) in characters (clamped to the text).
pub(crate) fn offset_of(src: &str, line: usize, col: usize) -> usize {
    let (mut l, mut c) = (1, 1);
    for (i, ch) in src.char_indices() {
        if l > line || (l == line && c >= col) {
            return i;
        }
        if ch == '\n' {
            l += 1;
            c = 1;
        } else {
            c += 1;
        }
    }
    src.len()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn p(s: &str) -> String {
        s.to_string()
    }

    #[test]
    fn finds_fields_and_elements() {
        let src = "#![enable(implicit_some)]\n(\n  data: [ (path: \"a.txt\") ],\n  planets: [\n    (name: \"b\", period: 3.0, signal: SemiAmplitude(4.0)),\n    Planet(name: r#\"c\"#, // comment\n      period: -2.0),\n  ],\n)";
        let e = scan(src);
        let paths: Vec<String> = e.iter().map(|e| e.path.to_string()).collect();
        assert!(paths.contains(&p("planets[1].period")), "{paths:?}");
        assert!(paths.contains(&p("data[0].path")), "{paths:?}");
        assert!(!paths.iter().any(|x| x.contains("enable")), "{paths:?}");
        let per = find(&e, &FieldPath::parse_simple("planets[1].period")).unwrap();
        assert_eq!(line_col(src, per.start), (7, 7));
        let name = find(&e, &FieldPath::parse_simple("planets[1].name")).unwrap();
        assert_eq!(name.string_value.as_deref(), Some("c"));
        // Inside the value of planets[0].signal:
        let off = offset_of(src, 5, 50);
        assert_eq!(
            path_at(&e, off).unwrap().path.to_string(),
            "planets[0].signal"
        );
        assert_eq!(offset_of(src, 7, 7), per.start);
    }
}
