//! Fuzzing the loaders and everything behind them: random and mutated scenario and design
//! files go to `parse_scenario` and `parse_designs`; whatever loads is searched briefly,
//! checked and swept. Nothing may panic: bad input is an error value, never a crash.

use std::path::Path;
use std::sync::atomic::AtomicBool;
use std::time::Duration;

use proptest::prelude::*;

use crankwright::design::{designs_to_yaml, parse_designs};
use crankwright::report::check::CheckReport;
use crankwright::report::table::{rows_to_csv, sweep_rows};
use crankwright::scenario::parse_scenario;
use crankwright::synthesis::output::{design_of, Summary};
use crankwright::synthesis::{synthesize, EngineOptions, Silent};

const SCENARIOS: &[&str] = &[
    include_str!("../scenarios/parcel-pusher.yaml"),
    include_str!("../scenarios/seed-tray-lifter.yaml"),
    include_str!("published/line6-free.yaml"),
    include_str!("published/arc5-timed.yaml"),
    "task:\n  path:\n    points: [[0, 0], [10, 4], [20, 10], [26, 20]]\n",
    "task:\n  path:\n    points: [[0, 0], [10, 4], [20, 10]]\n    crank_angles: [0, 40, 80]\n    timing: relative\nlimits:\n  crank: any\n  link_length: [2, 80]\n  output_pivot: [30, -20]\n  ground_angle: 10\n",
    "task:\n  path:\n    points: [[0, 0], [5, 1], [9, 4]]\nlimits:\n  input_pivot_region: [[-20, -20], [0, 0]]\n  output_pivot_region: [[10, -20], [30, 0]]\n  max_length_ratio: 4\n  min_transmission: 20\nsearch:\n  keep: 3\n  seed: 9\n",
    "task:\n  motion:\n    poses: [[0, 0, 0], [10, 5, 20], [20, 5, 45]]\n",
    "task:\n  function:\n    formula: \"x^2\"\n    x: [1, 2]\n    input_span: 90\n    output_span: 60\n",
    "task:\n  function:\n    table: [[0, 0], [1, 1], [2, 4]]\n    x: [0, 2]\n    input_span: 120\n    output_span: 80\n    precision_points: 3\n",
];

const DESIGNS: &[&str] = &[
    include_str!("../scenarios/vent-opener.design.yaml"),
    "- input_pivot: [0, 0]\n  output_pivot: [7, 0]\n  input_link: 2\n  coupler: 9\n  output_link: 6\n  coupler_point: [3, 2]\n  assembly: crossed\n- input_pivot: [1, 1]\n  output_pivot: [6, 1]\n  input_link: 4\n  coupler: 9\n  output_link: 6\n  assembly: open\n",
    // Parallelogram: a change point.
    "input_pivot: [0, 0]\noutput_pivot: [10, 0]\ninput_link: 4\ncoupler: 10\noutput_link: 4\nassembly: open\n",
    // Never assembles.
    "input_pivot: [0, 0]\noutput_pivot: [10, 0]\ninput_link: 1\ncoupler: 1\noutput_link: 1\nassembly: open\n",
];

/// Replacement values for numbers: edge cases of every kind.
const VALUES: &[&str] = &[
    "0",
    "-0",
    "-1",
    "1e300",
    "-1e300",
    "1e-300",
    ".nan",
    ".inf",
    "-.inf",
    "5e-324",
    "1e12",
    "1e13",
    "0.0000001",
    "123456789",
    "x",
    "[]",
    "{}",
    "null",
    "~",
    "\"7\"",
    "3",
    "-360",
    "720",
    "[1, 2]",
    "[[0, 0], [0, 0]]",
    "1.0000000001",
];

/// Lines to insert.
const LINES: &[&str] = &[
    "  bogus: 1",
    "limits: {}",
    "search:\n  starts: 2",
    "  crank: any",
    "    timing: relative",
    "    crank_angles: [0, 10]",
    "  min_transmission: 89",
    "  max_length_ratio: 1.5",
    "  link_length: [1, 2]",
    "  input_pivot: [0, 0]",
    "  output_pivot: [0, 0]",
    "  ground_angle: 90",
    "  pivot_region: [[0, 0], [1, 1]]",
    "- 1",
    "&a [1, 2]",
    "*a",
    "  path:\n    points: [[0, 0], [1, 1]]",
    "assembly: crossed",
];

const CHARS: &[char] = &[
    ':', '[', ']', '{', '}', ',', '-', '#', '&', '*', '!', '|', '>', ' ', '\t', '"', '\'', '\n',
    '0', '.',
];

#[derive(Debug, Clone)]
enum Mutation {
    Number(usize, String),
    DeleteLine(usize),
    DuplicateLine(usize),
    SwapLines(usize, usize),
    InsertLine(usize, usize),
    Truncate(usize),
    Char(usize, usize),
    Indent(usize, bool),
}

fn mutation() -> impl Strategy<Value = Mutation> {
    let i = 0..10_000usize;
    prop_oneof![
        6 => (i.clone(), value()).prop_map(|(a, b)| Mutation::Number(a, b)),
        1 => i.clone().prop_map(Mutation::DeleteLine),
        1 => i.clone().prop_map(Mutation::DuplicateLine),
        1 => (i.clone(), i.clone()).prop_map(|(a, b)| Mutation::SwapLines(a, b)),
        2 => (i.clone(), 0..LINES.len()).prop_map(|(a, b)| Mutation::InsertLine(a, b)),
        1 => i.clone().prop_map(Mutation::Truncate),
        1 => (i.clone(), 0..CHARS.len()).prop_map(|(a, b)| Mutation::Char(a, b)),
        1 => (i, any::<bool>()).prop_map(|(a, b)| Mutation::Indent(a, b)),
    ]
}

/// A replacement for a number: an edge case, or a random number written as YAML would.
fn value() -> impl Strategy<Value = String> {
    prop_oneof![
        2 => (0..VALUES.len()).prop_map(|i| VALUES[i].to_string()),
        2 => (-1e3f64..1e3).prop_map(|v| format!("{v}")),
        1 => prop::num::f64::ANY.prop_map(|v| {
            if v.is_nan() {
                ".nan".to_string()
            } else if v.is_infinite() {
                if v > 0.0 { ".inf" } else { "-.inf" }.to_string()
            } else {
                format!("{v:e}")
            }
        }),
        1 => (0u64..100_000).prop_map(|v| v.to_string()),
    ]
}

/// Byte ranges of the numbers in `text`.
fn numbers(text: &str) -> Vec<(usize, usize)> {
    let b = text.as_bytes();
    let mut out = Vec::new();
    let mut i = 0;
    while i < b.len() {
        let starts_number = b[i].is_ascii_digit()
            || ((b[i] == b'-' || b[i] == b'.') && b.get(i + 1).is_some_and(u8::is_ascii_digit));
        if starts_number {
            let s = i;
            i += 1;
            while i < b.len() && (b[i].is_ascii_alphanumeric() || b"+-.".contains(&b[i])) {
                i += 1;
            }
            out.push((s, i));
        } else {
            i += 1;
        }
    }
    out
}

fn apply(text: &str, m: &Mutation) -> String {
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    let n = lines.len().max(1);
    match *m {
        Mutation::Number(k, ref v) => {
            let nums = numbers(text);
            if nums.is_empty() {
                return text.to_string();
            }
            let (a, b) = nums[k % nums.len()];
            return format!("{}{}{}", &text[..a], v, &text[b..]);
        }
        Mutation::DeleteLine(k) => {
            if !lines.is_empty() {
                lines.remove(k % n);
            }
        }
        Mutation::DuplicateLine(k) => {
            if !lines.is_empty() {
                let l = lines[k % n].clone();
                lines.insert(k % n, l);
            }
        }
        Mutation::SwapLines(a, b) => {
            if !lines.is_empty() {
                lines.swap(a % n, b % n);
            }
        }
        Mutation::InsertLine(k, l) => lines.insert(k % (lines.len() + 1), LINES[l].to_string()),
        Mutation::Truncate(k) => {
            let mut cut = k % (text.len() + 1);
            while !text.is_char_boundary(cut) {
                cut -= 1;
            }
            return text[..cut].to_string();
        }
        Mutation::Char(k, c) => {
            let mut s = text.to_string();
            let mut at = k % (s.len() + 1);
            while !s.is_char_boundary(at) {
                at -= 1;
            }
            s.insert(at, CHARS[c]);
            return s;
        }
        Mutation::Indent(k, add) => {
            if !lines.is_empty() {
                let l = &mut lines[k % n];
                if add {
                    l.insert_str(0, "  ");
                } else if l.starts_with("  ") {
                    l.replace_range(..2, "");
                }
            }
        }
    }
    let mut out = lines.join("\n");
    out.push('\n');
    out
}

/// Loads scenario text and, when it loads, runs a tiny search and checks what it finds.
fn exercise_scenario(text: &str) {
    let path = Path::new("fuzz.yaml");
    let Ok(mut scenario) = parse_scenario(path, text) else {
        return;
    };
    let Ok(task) = crankwright::task::build(&scenario) else {
        return;
    };
    scenario.search.starts = scenario.search.starts.min(4);
    let options = EngineOptions {
        seed: scenario.search.seed,
        starts: scenario.search.starts,
        keep: 2,
        quick_iterations: 8,
        full_iterations: 15,
        time_limit: Duration::from_secs(3),
        ..EngineOptions::default()
    };
    let outcome = synthesize(task.as_ref(), &options, &AtomicBool::new(false), &Silent);
    let summary = Summary::new(&scenario, &outcome, options.seed, options.starts);
    let json = serde_json::to_string(&summary).expect("summary serialises");
    let _: Summary = serde_json::from_str(&json).expect("summary reads back");
    let designs: Vec<_> = outcome
        .designs
        .iter()
        .map(|r| design_of(&scenario, r.rank, &r.design.linkage))
        .collect();
    if !designs.is_empty() {
        let yaml = designs_to_yaml(&designs);
        let back = parse_designs(path, &yaml).expect("written designs read back");
        assert_eq!(back.len(), designs.len());
    }
    for d in &designs {
        exercise_design(d);
    }
}

fn exercise_design(d: &crankwright::Design) {
    let report = CheckReport::new(d);
    let _ = report.to_text();
    let _ = serde_json::to_string(&report).expect("report serialises");
    let rows = sweep_rows(&d.linkage, 7.0, 60.0);
    let _ = rows_to_csv(&rows, &d.units);
}

fn exercise_designs(text: &str) {
    if let Ok(designs) = parse_designs(Path::new("fuzz.yaml"), text) {
        for d in &designs {
            exercise_design(d);
        }
    }
}

proptest! {
    // 200 cases each by default (PROPTEST_CASES=N for a deeper run); failing cases are kept
    // in proptest-regressions/ and replayed first on every run.
    #![proptest_config(ProptestConfig {
        cases: std::env::var("PROPTEST_CASES").ok().and_then(|v| v.parse().ok()).unwrap_or(200),
        failure_persistence: Some(Box::new(
            proptest::test_runner::FileFailurePersistence::Direct(
                "proptest-regressions/fuzz_loader.txt"
            )
        )),
        ..ProptestConfig::default()
    })]

    #[test]
    fn mutated_scenarios_never_panic(
        base in 0..SCENARIOS.len(),
        muts in prop::collection::vec(mutation(), 1..5),
    ) {
        let text = muts.iter().fold(SCENARIOS[base].to_string(), |t, m| apply(&t, m));
        exercise_scenario(&text);
    }

    // Numbers only: the files keep their shape, so most load and reach the search.
    #[test]
    fn scenarios_with_random_numbers_never_panic(
        base in 0..SCENARIOS.len(),
        nums in prop::collection::vec((0..10_000usize, value()), 1..4),
    ) {
        let text = nums.into_iter().fold(SCENARIOS[base].to_string(), |t, (k, v)| {
            apply(&t, &Mutation::Number(k, v))
        });
        exercise_scenario(&text);
    }

    #[test]
    fn mutated_designs_never_panic(
        base in 0..DESIGNS.len(),
        muts in prop::collection::vec(mutation(), 1..5),
    ) {
        let text = muts.iter().fold(DESIGNS[base].to_string(), |t, m| apply(&t, m));
        exercise_designs(&text);
    }

    #[test]
    fn random_text_never_panics(text in "(?s).{0,300}") {
        exercise_scenario(&text);
        exercise_designs(&text);
    }

    // Random numbers in a well-formed design: every value a design file can hold.
    #[test]
    fn random_design_numbers_never_panic(
        v in prop::array::uniform9(prop_oneof![
            4 => -1e3f64..1e3,
            1 => -1e13f64..1e13,
            1 => prop::num::f64::ANY,
            1 => Just(0.0),
            1 => 1e-12f64..1e-6,
        ]),
        crossed in any::<bool>(),
    ) {
        let text = format!(
            "input_pivot: [{:?}, {:?}]\noutput_pivot: [{:?}, {:?}]\ninput_link: {:?}\n\
             coupler: {:?}\noutput_link: {:?}\ncoupler_point: [{:?}, {:?}]\nassembly: {}\n",
            v[0], v[1], v[2], v[3], v[4], v[5], v[6], v[7], v[8],
            if crossed { "crossed" } else { "open" }
        );
        exercise_designs(&text.replace("inf", ".inf").replace("NaN", ".nan"));
    }
}

// Regression (found by the fuzzer): poses 1e12 apart are valid input, but the search box
// around them (a few times the target set's size) let synthesis propose pivots beyond the
// 1e12 a design file accepts, so `synth` wrote designs that `check` then refused. Such
// candidates are now rejected, and every written design reads back.
#[test]
fn designs_written_for_huge_but_valid_scenarios_read_back() {
    for text in [
        "task:\n  motion:\n    poses: [[0, 0, 0], [1e12, 5, 20], [20, 5, 45]]\n",
        "task:\n  path:\n    points: [[-1e12, 0], [0, 3e11], [1e12, 0]]\n",
    ] {
        for seed in 0..4 {
            let t = text.replace("task:", &format!("search:\n  seed: {seed}\ntask:"));
            exercise_scenario(&t);
        }
    }
}
