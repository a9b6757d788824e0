//! Line numbers for dotted key paths in TOML source text.
//!
//! The TOML parser gives a value tree without positions, so a light scanner walks the source
//! once and records where each table header and each `key =` starts. Paths are resolved the
//! way the value tree is: `[[block]]` headers become `block.0`, `block.1`, … and a
//! `[[block.step]]` under the second block becomes `block.1.step.0`. Keys inside inline tables
//! are not recorded; a path into one resolves to the key that holds the inline table.
//!
//! The index is only built for text the parser accepted, but it never panics or loops on any
//! input.

use std::collections::HashMap;

/// 1-based line of a byte offset in `source`; offsets past the end give the last line.
pub fn line_of_offset(source: &str, offset: usize) -> usize {
    let end = offset.min(source.len());
    1 + source.as_bytes()[..end].iter().filter(|&&b| b == b'\n').count()
}

/// 1-based line where `key_path` (dotted, array indices as segments) is defined in `source`,
/// or the line of its nearest recorded ancestor.
pub fn line_of_key(source: &str, key_path: &str) -> Option<usize> {
    KeyIndex::new(source).line_of(key_path)
}

/// Where each table header and key of a TOML document starts.
#[derive(Debug, Clone, Default)]
pub struct KeyIndex {
    /// In source order.
    entries: Vec<KeyEntry>,
}

#[derive(Debug, Clone, PartialEq)]
struct KeyEntry {
    path: String,
    offset: usize,
    line: usize,
}

/// A recorded position: the resolved dotted path and its 1-based line.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Located<'a> {
    pub path: &'a str,
    pub line: usize,
}

impl KeyIndex {
    pub fn new(source: &str) -> Self {
        Scanner::new(source).run()
    }

    /// Line of `key_path`, else of its longest recorded ancestor; `None` if nothing matches.
    pub fn line_of(&self, key_path: &str) -> Option<usize> {
        let mut candidate = key_path;
        loop {
            if let Some(entry) = self.entries.iter().find(|e| e.path == candidate) {
                return Some(entry.line);
            }
            candidate = &candidate[..candidate.rfind('.')?];
        }
    }

    /// The last header or key that starts at or before byte `offset`.
    pub fn entry_at_offset(&self, offset: usize) -> Option<Located<'_>> {
        self.entries.iter().take_while(|e| e.offset <= offset).last().map(|e| Located { path: &e.path, line: e.line })
    }
}

struct Scanner<'a> {
    source: &'a str,
    bytes: &'a [u8],
    pos: usize,
    line: usize,
    /// Resolved path of the table the following keys belong to.
    table: String,
    /// Elements seen so far of each array of tables, by resolved path.
    array_lengths: HashMap<String, usize>,
    entries: Vec<KeyEntry>,
}

impl<'a> Scanner<'a> {
    fn new(source: &'a str) -> Self {
        Self {
            source,
            bytes: source.as_bytes(),
            pos: 0,
            line: 1,
            table: String::new(),
            array_lengths: HashMap::new(),
            entries: Vec::new(),
        }
    }

    fn run(mut self) -> KeyIndex {
        while self.skip_blank() {
            let start = self.pos;
            match self.bytes[self.pos] {
                b'#' => self.skip_to_line_end(),
                b'[' => self.header(),
                _ => self.key_value(),
            }
            // Malformed text: make sure every round consumes something.
            if self.pos == start {
                self.pos += 1;
            }
        }
        KeyIndex { entries: self.entries }
    }

    fn peek(&self, ahead: usize) -> Option<u8> {
        self.bytes.get(self.pos + ahead).copied()
    }

    /// Skips whitespace and newlines; false at the end of the text.
    fn skip_blank(&mut self) -> bool {
        while let Some(b) = self.peek(0) {
            match b {
                b'\n' => {
                    self.line += 1;
                    self.pos += 1;
                }
                b' ' | b'\t' | b'\r' => self.pos += 1,
                _ => return true,
            }
        }
        false
    }

    fn skip_spaces(&mut self) {
        while matches!(self.peek(0), Some(b' ' | b'\t')) {
            self.pos += 1;
        }
    }

    /// Moves to the next newline without consuming it.
    fn skip_to_line_end(&mut self) {
        while !matches!(self.peek(0), None | Some(b'\n')) {
            self.pos += 1;
        }
    }

    fn header(&mut self) {
        let start = self.pos;
        let is_array = self.peek(1) == Some(b'[');
        self.pos += if is_array { 2 } else { 1 };
        let segments = self.dotted_key();
        self.skip_to_line_end();
        if segments.is_empty() {
            return;
        }

        let mut path = String::new();
        let last = segments.len() - 1;
        for (i, segment) in segments.iter().enumerate() {
            push_segment(&mut path, segment);
            if is_array && i == last {
                let length = self.array_lengths.entry(path.clone()).or_insert(0);
                let index = *length;
                *length += 1;
                push_segment(&mut path, &index.to_string());
            } else if let Some(length) = self.array_lengths.get(&path) {
                // A header under an array of tables extends its latest element.
                let index = length.saturating_sub(1);
                push_segment(&mut path, &index.to_string());
            }
        }
        self.entries.push(KeyEntry { path: path.clone(), offset: start, line: self.line });
        self.table = path;
    }

    fn key_value(&mut self) {
        let start = self.pos;
        let segments = self.dotted_key();
        self.skip_spaces();
        if segments.is_empty() || self.peek(0) != Some(b'=') {
            self.skip_to_line_end();
            return;
        }
        self.pos += 1;
        let mut path = self.table.clone();
        for segment in &segments {
            push_segment(&mut path, segment);
        }
        self.entries.push(KeyEntry { path, offset: start, line: self.line });
        self.skip_value();
    }

    /// Reads `a."b c".d`, stopping before `=`, `]` or anything else that ends a key.
    fn dotted_key(&mut self) -> Vec<String> {
        let mut segments = Vec::new();
        loop {
            self.skip_spaces();
            let segment = match self.peek(0) {
                Some(quote @ (b'"' | b'\'')) => self.quoted_key(quote),
                Some(b) if is_bare_key_byte(b) => {
                    let start = self.pos;
                    while self.peek(0).is_some_and(is_bare_key_byte) {
                        self.pos += 1;
                    }
                    self.source.get(start..self.pos).map(str::to_string)
                }
                _ => None,
            };
            match segment {
                Some(segment) => segments.push(segment),
                None => return segments,
            }
            self.skip_spaces();
            if self.peek(0) != Some(b'.') {
                return segments;
            }
            self.pos += 1;
        }
    }

    fn quoted_key(&mut self, quote: u8) -> Option<String> {
        self.pos += 1;
        let start = self.pos;
        while let Some(b) = self.peek(0) {
            if b == quote {
                let text = self.source.get(start..self.pos).map(|s| s.replace("\\\"", "\""));
                self.pos += 1;
                return text;
            }
            if b == b'\n' {
                return None;
            }
            self.pos += if quote == b'"' && b == b'\\' { 2 } else { 1 };
        }
        None
    }

    /// Skips a value (which may span lines inside brackets or multi-line strings) and any
    /// comment after it, stopping at the newline that ends the statement.
    fn skip_value(&mut self) {
        let mut depth = 0usize;
        while let Some(b) = self.peek(0) {
            match b {
                b'\n' if depth == 0 => return,
                b'\n' => {
                    self.line += 1;
                    self.pos += 1;
                }
                b'"' | b'\'' => self.skip_string(b),
                b'[' | b'{' => {
                    depth += 1;
                    self.pos += 1;
                }
                b']' | b'}' => {
                    depth = depth.saturating_sub(1);
                    self.pos += 1;
                }
                b'#' => self.skip_to_line_end(),
                _ => self.pos += 1,
            }
        }
    }

    fn skip_string(&mut self, quote: u8) {
        let multi_line = self.peek(1) == Some(quote) && self.peek(2) == Some(quote);
        self.pos += if multi_line { 3 } else { 1 };
        while let Some(b) = self.peek(0) {
            if b == b'\\' && quote == b'"' {
                if self.peek(1) == Some(b'\n') {
                    self.line += 1;
                }
                self.pos += 2;
                continue;
            }
            if b == quote {
                if !multi_line {
                    self.pos += 1;
                    return;
                }
                if self.peek(1) == Some(quote) && self.peek(2) == Some(quote) {
                    self.pos += 3;
                    // Up to two more quotes may belong to the string's content.
                    while self.peek(0) == Some(quote) {
                        self.pos += 1;
                    }
                    return;
                }
            }
            if b == b'\n' {
                if !multi_line {
                    return;
                }
                self.line += 1;
            }
            self.pos += 1;
        }
    }
}

fn is_bare_key_byte(b: u8) -> bool {
    b.is_ascii_alphanumeric() || b == b'_' || b == b'-'
}

fn push_segment(path: &mut String, segment: &str) {
    if !path.is_empty() {
        path.push('.');
    }
    path.push_str(segment);
}

#[cfg(test)]
mod tests {
    use super::*;

    const PROFILE: &str = r#"name = "p"
# a comment with [brackets]
[[block]]
[[block.step]]
charge_c = 1.0
[[block.step]]
rest = true

[[block]]
repeat = 3
[[block.step]]
label = """two
lines"""
charge_a = 2.0
[[block.step]]
end_time_s = 5
"#;

    #[test]
    fn array_of_tables_get_indices() {
        let index = KeyIndex::new(PROFILE);
        assert_eq!(index.line_of("name"), Some(1));
        assert_eq!(index.line_of("block.0"), Some(3));
        assert_eq!(index.line_of("block.0.step.0.charge_c"), Some(5));
        assert_eq!(index.line_of("block.0.step.1.rest"), Some(7));
        assert_eq!(index.line_of("block.1.repeat"), Some(10));
        assert_eq!(index.line_of("block.1.step.0.label"), Some(12));
        assert_eq!(index.line_of("block.1.step.0.charge_a"), Some(14));
        assert_eq!(index.line_of("block.1.step.1.end_time_s"), Some(16));
    }

    #[test]
    fn missing_keys_fall_back_to_the_nearest_ancestor() {
        let index = KeyIndex::new(PROFILE);
        assert_eq!(index.line_of("block.1.step.1.end_soc_pct"), Some(15));
        assert_eq!(index.line_of("nothing.here"), None);
    }

    #[test]
    fn multi_line_arrays_are_not_headers() {
        let source = "[negative]\nocp_table = [\n  [0.0, 1.0], # first\n  [1.0, 0.1],\n]\n\
                      thickness_um = 3\n[positive]\n\"quoted key\" = 1\na.b = 2\n";
        let index = KeyIndex::new(source);
        assert_eq!(index.line_of("negative.ocp_table"), Some(2));
        assert_eq!(index.line_of("negative.thickness_um"), Some(6));
        assert_eq!(index.line_of("positive"), Some(7));
        assert_eq!(index.line_of("positive.quoted key"), Some(8));
        assert_eq!(index.line_of("positive.a.b"), Some(9));
    }

    #[test]
    fn offsets_map_to_the_enclosing_entry() {
        let source = "a = 1\n[t]\nb = \"x\"\n";
        let index = KeyIndex::new(source);
        let value_offset = source.find("\"x\"").unwrap_or(0);
        assert_eq!(index.entry_at_offset(value_offset), Some(Located { path: "t.b", line: 3 }));
        assert_eq!(line_of_offset(source, value_offset), 3);
        assert_eq!(line_of_offset(source, 10_000), 4);
    }

    #[test]
    fn garbage_does_not_hang_or_panic() {
        for source in ["[", "[[", "\"", "= = =", "a = \"\"\"", "a = [ [ [", "'''", "é = ü", "\\"] {
            let _ = KeyIndex::new(source);
        }
    }
}
