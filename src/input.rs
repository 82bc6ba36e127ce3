//! Reading the project's YAML files: errors that name the file, the place and the field.

use std::path::{Path, PathBuf};

/// Failure to read or validate an input file. Every variant names the file.
#[derive(Debug, thiserror::Error)]
pub enum InputError {
    /// The file could not be read.
    #[error("{path}: cannot read: {source}")]
    Io {
        /// The file.
        path: PathBuf,
        /// The cause.
        #[source]
        source: std::io::Error,
    },
    /// The YAML is malformed or does not match the expected structure.
    #[error("{path}{}: {message}", location(*line, *column))]
    Parse {
        /// The file.
        path: PathBuf,
        /// 1-based line, when known.
        line: Option<usize>,
        /// 1-based column, when known.
        column: Option<usize>,
        /// What is wrong, in words.
        message: String,
    },
    /// A field has a value that parses but is not acceptable, at a known place in the file.
    #[error("{path}:{line}:{column}: {field}: {message}")]
    InvalidAt {
        /// The file.
        path: PathBuf,
        /// 1-based line of the field's value.
        line: usize,
        /// 1-based column of the field's value.
        column: usize,
        /// Dotted field name, e.g. `task.path.points[3]`.
        field: String,
        /// What is wrong and what is expected.
        message: String,
    },
    /// The file is of the other kind: a scenario given where a design is read, or the
    /// reverse.
    #[error("{path}: this is {}, not {}; {}", found.described(), expected.described(), found.advice(path))]
    WrongKind {
        /// The file.
        path: PathBuf,
        /// The kind it looks like.
        found: FileKind,
        /// The kind the command reads.
        expected: FileKind,
    },
    /// A field has a value that parses but is not acceptable.
    #[error("{path}: {field}: {message}")]
    Invalid {
        /// The file.
        path: PathBuf,
        /// Dotted field name, e.g. `limits.link_length`.
        field: String,
        /// What is wrong and what is expected.
        message: String,
    },
}

/// The two kinds of YAML file the project reads.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FileKind {
    /// A design file: one linkage or a list of them (`check`, `sweep`).
    Design,
    /// A scenario file: a task with limits and search settings (`synth`).
    Scenario,
}

impl FileKind {
    /// Top-level keys only this kind of file has.
    fn own_keys(self) -> &'static [&'static str] {
        match self {
            FileKind::Design => &[
                "input_pivot",
                "output_pivot",
                "input_link",
                "coupler",
                "output_link",
                "coupler_point",
                "assembly",
            ],
            FileKind::Scenario => &["task", "limits", "search"],
        }
    }

    /// The kind with an article, for messages.
    fn described(self) -> &'static str {
        match self {
            FileKind::Design => "a design file (a linkage's dimensions)",
            FileKind::Scenario => "a scenario file (a task for `synth`)",
        }
    }

    /// What to do with a file of this kind.
    fn advice(self, path: &Path) -> String {
        match self {
            FileKind::Design => format!(
                "`synth` reads a scenario; analyse this design with `crankwright check {0}` or `crankwright sweep {0}`",
                path.display()
            ),
            FileKind::Scenario => format!(
                "`check` and `sweep` read a design (such as the designs.yaml `synth` writes); design from this scenario with `crankwright synth {}`",
                path.display()
            ),
        }
    }

    /// The kind a parsed document looks like: the kind whose own keys it has at the top
    /// (of its first entry, for a list) while having none of the other's.
    fn of(value: &serde_yaml::Value) -> Option<Self> {
        let map = match value {
            serde_yaml::Value::Sequence(items) => items.first()?.as_mapping()?,
            other => other.as_mapping()?,
        };
        let has = |k: FileKind| {
            k.own_keys()
                .iter()
                .any(|key| map.contains_key(serde_yaml::Value::from(*key)))
        };
        match (has(FileKind::Design), has(FileKind::Scenario)) {
            (true, false) => Some(FileKind::Design),
            (false, true) => Some(FileKind::Scenario),
            _ => None,
        }
    }
}

/// [`InputError::WrongKind`] when `value` (the parsed document of `path`) looks like a file
/// of another kind than `expected`.
pub fn wrong_kind(
    path: &Path,
    value: &serde_yaml::Value,
    expected: FileKind,
) -> Option<InputError> {
    let found = FileKind::of(value)?;
    (found != expected).then(|| InputError::WrongKind {
        path: path.to_path_buf(),
        found,
        expected,
    })
}

/// Refuses YAML `text` that looks like a file of another kind than `expected` (see
/// [`wrong_kind`]); text that does not parse is left to the typed parse, which says where.
///
/// # Errors
/// [`InputError::WrongKind`].
pub fn check_kind(path: &Path, text: &str, expected: FileKind) -> Result<(), InputError> {
    match serde_yaml::from_str::<serde_yaml::Value>(text) {
        Ok(v) => wrong_kind(path, &v, expected).map_or(Ok(()), Err),
        Err(_) => Ok(()),
    }
}

fn location(line: Option<usize>, column: Option<usize>) -> String {
    match (line, column) {
        (Some(l), Some(c)) => format!(":{l}:{c}"),
        (Some(l), None) => format!(":{l}"),
        _ => String::new(),
    }
}

/// Known keys per mapping, used to suggest the closest one for a misspelt key.
fn suggest(message: &str) -> Option<String> {
    // serde's message: "unknown field `foo`, expected one of `a`, `b`" (or "expected `a`").
    let start = message.find("unknown field `")? + "unknown field `".len();
    let rest = &message[start..];
    let (bad, tail) = rest.split_once('`')?;
    let known: Vec<&str> = tail.split('`').skip(1).step_by(2).collect();
    let best = known
        .iter()
        .map(|k| (edit_distance(bad, k), *k))
        .min_by_key(|(d, _)| *d)?;
    (best.0 <= bad.len().max(3) / 2 + 1).then(|| best.1.to_string())
}

/// A number for a message: at most six decimals, without trailing zeros (`14.142136`, `50`);
/// very large or small magnitudes in exponent form.
pub fn short(v: f64) -> String {
    if v != 0.0 && v.is_finite() && !(1e-4..1e12).contains(&v.abs()) {
        return format!("{v:e}");
    }
    let t = format!("{v:.6}");
    if t.contains('.') {
        t.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        t
    }
}

/// Levenshtein distance between two short strings.
pub fn edit_distance(a: &str, b: &str) -> usize {
    let a: Vec<char> = a.chars().collect();
    let b: Vec<char> = b.chars().collect();
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    for i in 1..=a.len() {
        let mut cur = vec![i; b.len() + 1];
        for j in 1..=b.len() {
            let sub = prev[j - 1] + usize::from(a[i - 1] != b[j - 1]);
            cur[j] = sub.min(prev[j] + 1).min(cur[j - 1] + 1);
        }
        prev = cur;
    }
    prev[b.len()]
}

/// Reads `path` to a string.
///
/// # Errors
/// [`InputError::Io`] when the file cannot be read.
pub fn read_text(path: &Path) -> Result<String, InputError> {
    std::fs::read_to_string(path).map_err(|source| InputError::Io {
        path: path.to_path_buf(),
        source,
    })
}

/// Parses YAML text into `T`, turning serde_yaml's error into [`InputError::Parse`] with the
/// line and column and, for a misspelt key, the closest known key.
///
/// # Errors
/// [`InputError::Parse`] for malformed YAML or a structure that does not match `T`.
pub fn parse_yaml<T: serde::de::DeserializeOwned>(
    path: &Path,
    text: &str,
) -> Result<T, InputError> {
    serde_yaml::from_str(text).map_err(|e| yaml_error_in(path, text, &e))
}

/// Message for a tab in the indentation of line `line` (1-based) of `text`, with the tab's
/// 1-based column; YAML forbids tabs there, and the parser only says it found a character
/// that cannot start a token.
fn tab_indent(text: &str, line: usize) -> Option<(usize, String)> {
    let l = text.lines().nth(line.checked_sub(1)?)?;
    let indent = &l[..l.len() - l.trim_start_matches([' ', '\t']).len()];
    let col = indent.find('\t')? + 1;
    Some((
        col,
        "tabs are not allowed for indentation in YAML, use spaces".to_owned(),
    ))
}

/// Converts a serde_yaml error on `text` into [`InputError::Parse`], saying so plainly when
/// the cause is a tab in the indentation.
pub fn yaml_error_in(path: &Path, text: &str, e: &serde_yaml::Error) -> InputError {
    let tab = e.location().and_then(|l| tab_indent(text, l.line()));
    match (tab, e.location()) {
        (Some((column, message)), Some(l)) => InputError::Parse {
            path: path.to_path_buf(),
            line: Some(l.line()),
            column: Some(column),
            message,
        },
        _ => yaml_error(path, e),
    }
}

/// Converts a serde_yaml error into [`InputError::Parse`].
pub fn yaml_error(path: &Path, e: &serde_yaml::Error) -> InputError {
    let loc = e.location();
    let mut message = e.to_string();
    // serde_yaml appends " at line L column C"; the location is printed separately.
    if let Some(i) = message.find(" at line ") {
        message.truncate(i);
    }
    if let Some(s) = suggest(&message) {
        message = format!("{message} (did you mean `{s}`?)");
    }
    InputError::Parse {
        path: path.to_path_buf(),
        line: loc.as_ref().map(|l| l.line()),
        column: loc.as_ref().map(|l| l.column()),
        message,
    }
}

/// One step of a field path: a mapping key or a sequence index.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum FieldStep {
    /// A key of a mapping.
    Key(String),
    /// A 0-based index into a sequence.
    Index(usize),
}

/// Splits a dotted field name such as `task.path.points[3][1]` into steps; `None` when it is
/// not a field path (e.g. `(file)`).
pub fn field_steps(field: &str) -> Option<Vec<FieldStep>> {
    let mut steps = Vec::new();
    for part in field.split('.') {
        let (key, mut rest) = match part.find('[') {
            Some(i) => (&part[..i], &part[i..]),
            None => (part, ""),
        };
        if !key.is_empty() {
            if !key
                .chars()
                .all(|c| c.is_ascii_alphanumeric() || c == '_' || c == '-')
            {
                return None;
            }
            steps.push(FieldStep::Key(key.to_string()));
        }
        while let Some(r) = rest.strip_prefix('[') {
            let (num, tail) = r.split_once(']')?;
            steps.push(FieldStep::Index(num.parse().ok()?));
            rest = tail;
        }
        if !rest.is_empty() {
            return None;
        }
    }
    (!steps.is_empty()).then_some(steps)
}

/// Message of the error that marks the node being looked for (never shown to a user).
const FOUND: &str = "\u{0}crankwright-field-found";

/// A serde seed that walks `steps` down the document and fails at the node they name, so that
/// the YAML parser attaches that node's line and column to the error.
struct Probe<'a>(&'a [FieldStep]);

impl<'de> serde::de::DeserializeSeed<'de> for Probe<'_> {
    type Value = ();
    fn deserialize<D: serde::Deserializer<'de>>(self, d: D) -> Result<(), D::Error> {
        d.deserialize_any(self)
    }
}

impl Probe<'_> {
    fn at<E: serde::de::Error>(&self) -> Result<(), E> {
        if self.0.is_empty() {
            Err(E::custom(FOUND))
        } else {
            Ok(())
        }
    }
}

impl<'de> serde::de::Visitor<'de> for Probe<'_> {
    type Value = ();
    fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
        f.write_str("any value")
    }
    fn visit_bool<E: serde::de::Error>(self, _: bool) -> Result<(), E> {
        self.at()
    }
    fn visit_i64<E: serde::de::Error>(self, _: i64) -> Result<(), E> {
        self.at()
    }
    fn visit_u64<E: serde::de::Error>(self, _: u64) -> Result<(), E> {
        self.at()
    }
    fn visit_i128<E: serde::de::Error>(self, _: i128) -> Result<(), E> {
        self.at()
    }
    fn visit_u128<E: serde::de::Error>(self, _: u128) -> Result<(), E> {
        self.at()
    }
    fn visit_f64<E: serde::de::Error>(self, _: f64) -> Result<(), E> {
        self.at()
    }
    fn visit_str<E: serde::de::Error>(self, _: &str) -> Result<(), E> {
        self.at()
    }
    fn visit_unit<E: serde::de::Error>(self) -> Result<(), E> {
        self.at()
    }
    fn visit_none<E: serde::de::Error>(self) -> Result<(), E> {
        self.at()
    }
    fn visit_some<D: serde::Deserializer<'de>>(self, d: D) -> Result<(), D::Error> {
        d.deserialize_any(self)
    }
    fn visit_enum<A: serde::de::EnumAccess<'de>>(self, _: A) -> Result<(), A::Error> {
        self.at()
    }
    fn visit_seq<A: serde::de::SeqAccess<'de>>(self, mut seq: A) -> Result<(), A::Error> {
        self.at()?;
        let want = match self.0.first() {
            Some(FieldStep::Index(i)) => Some(*i),
            _ => None,
        };
        let mut i = 0;
        loop {
            if Some(i) == want {
                if seq.next_element_seed(Probe(&self.0[1..]))?.is_none() {
                    return Ok(());
                }
            } else if seq.next_element::<serde::de::IgnoredAny>()?.is_none() {
                return Ok(());
            }
            i += 1;
        }
    }
    fn visit_map<A: serde::de::MapAccess<'de>>(self, mut map: A) -> Result<(), A::Error> {
        self.at()?;
        let want = match self.0.first() {
            Some(FieldStep::Key(k)) => Some(k.as_str()),
            _ => None,
        };
        while let Some(key) = map.next_key::<serde_yaml::Value>()? {
            if want.is_some() && key.as_str() == want {
                map.next_value_seed(Probe(&self.0[1..]))?;
            } else {
                map.next_value::<serde::de::IgnoredAny>()?;
            }
        }
        Ok(())
    }
}

/// Line and column (1-based) of the value at `steps` in YAML `text`, when it is there.
pub fn locate(text: &str, steps: &[FieldStep]) -> Option<(usize, usize)> {
    use serde::de::DeserializeSeed as _;
    let de = serde_yaml::Deserializer::from_str(text);
    match Probe(steps).deserialize(de) {
        Err(e) if e.to_string().contains(FOUND) => e.location().map(|l| (l.line(), l.column())),
        _ => None,
    }
}

/// Gives an [`InputError::Invalid`] the line and column of its field in `text`, when found.
pub fn with_location(err: InputError, text: &str) -> InputError {
    match err {
        InputError::Invalid {
            path,
            field,
            message,
        } => match field_steps(&field).and_then(|s| locate(text, &s)) {
            Some((line, column)) => InputError::InvalidAt {
                path,
                line,
                column,
                field,
                message,
            },
            None => InputError::Invalid {
                path,
                field,
                message,
            },
        },
        other => other,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn suggests_closest_key() {
        let m = "unknown field `coupler_pont`, expected one of `coupler`, `coupler_point`, `units`";
        assert_eq!(suggest(m).as_deref(), Some("coupler_point"));
        assert_eq!(edit_distance("kitten", "sitting"), 3);
    }

    // YAML forbids tabs in indentation (YAML 1.2, section 6.1: "tab characters must not
    // be used in indentation"); the parser's own words do not say so.
    #[test]
    fn a_tab_in_the_indentation_is_named() {
        for (text, line, column) in [("a:\n\tb: 1\n", 2, 1), ("a:\n  b:\n  \tc: 1\n", 3, 3)] {
            let e = parse_yaml::<serde_yaml::Value>(Path::new("t.yaml"), text).unwrap_err();
            assert_eq!(
                e.to_string(),
                format!("t.yaml:{line}:{column}: tabs are not allowed for indentation in YAML, use spaces")
            );
        }
        // A tab after a key's colon is not indentation.
        assert!(parse_yaml::<serde_yaml::Value>(Path::new("t.yaml"), "a:\t1\n").is_ok());
    }

    #[test]
    fn the_other_kind_of_file_is_recognised() {
        let design = "input_pivot: [0, 0]\noutput_pivot: [1, 0]\ninput_link: 1\n";
        let scenario = "task:\n  path:\n    points: [[0, 0], [1, 1]]\n";
        let p = Path::new("f.yaml");
        let e = check_kind(p, scenario, FileKind::Design)
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("a scenario file") && e.contains("crankwright synth f.yaml"),
            "{e}"
        );
        let e = check_kind(p, design, FileKind::Scenario)
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("a design file") && e.contains("crankwright check f.yaml"),
            "{e}"
        );
        let list = format!("- {}", design.replace('\n', "\n  "));
        assert!(check_kind(p, &list, FileKind::Scenario).is_err());
        for ok in [(design, FileKind::Design), (scenario, FileKind::Scenario)] {
            assert!(check_kind(p, ok.0, ok.1).is_ok());
        }
        // Neither kind, both kinds, or not YAML: left to the typed parse.
        for text in ["name: x\n", "task: 1\ncoupler: 2\n", "[unclosed"] {
            assert!(check_kind(p, text, FileKind::Design).is_ok(), "{text}");
        }
    }

    #[test]
    fn short_numbers() {
        assert_eq!(short(14.142135623730951), "14.142136");
        assert_eq!(short(50.0), "50");
        assert_eq!(short(-0.5), "-0.5");
        assert_eq!(short(1.5e-9), "1.5e-9");
        assert_eq!(short(0.0), "0");
    }

    #[test]
    fn field_paths_split_into_steps() {
        use FieldStep::{Index, Key};
        assert_eq!(
            field_steps("task.path.points[3][1]"),
            Some(vec![
                Key("task".into()),
                Key("path".into()),
                Key("points".into()),
                Index(3),
                Index(1)
            ])
        );
        assert_eq!(
            field_steps("[2].coupler"),
            Some(vec![Index(2), Key("coupler".into())])
        );
        assert_eq!(field_steps("(file)"), None);
        assert_eq!(field_steps("design 2"), None);
        assert_eq!(field_steps("a[x]"), None);
    }

    #[test]
    fn locates_nested_values_in_block_and_flow_style() {
        let text = "task:\n  path:\n    points: [[0, 0], [1, .nan]]\nlimits:\n  link_length:\n    - 3\n    - 1\n";
        let at = |f: &str| locate(text, &field_steps(f).unwrap());
        assert_eq!(at("task.path.points[1][1]"), Some((3, 26)));
        assert_eq!(at("limits.link_length[1]"), Some((7, 7)));
        assert_eq!(at("limits.link_length"), Some((6, 5)));
        assert_eq!(at("limits.pivot_region"), None);
        assert_eq!(at("task.path.points[5]"), None);
        assert_eq!(locate("a: 1", &field_steps("b").unwrap()), None);
        assert_eq!(locate("a: 1", &field_steps("a[0]").unwrap()), None);
    }
}
