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
    serde_yaml::from_str(text).map_err(|e| yaml_error(path, &e))
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn suggests_closest_key() {
        let m = "unknown field `coupler_pont`, expected one of `coupler`, `coupler_point`, `units`";
        assert_eq!(suggest(m).as_deref(), Some("coupler_point"));
        assert_eq!(edit_distance("kitten", "sitting"), 3);
    }
}
