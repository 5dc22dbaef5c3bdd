//! Property test of the scenario reader: no input makes it panic.
//!
//! A fixed budget of inputs, from a fixed seed, is fed to
//! [`Scenario::parse`] and, when that succeeds, to [`Scenario::grid`],
//! [`Scenario::check_resolution`], [`Scenario::warnings`],
//! [`Scenario::solver_grid`], the symmetry split
//! ([`lathe::study::halves`]) and, for one in [`PROBLEM_EVERY`] of the
//! grids of at most [`PROBLEM_CELLS`] cells, [`Scenario::problem`] (which
//! meshes the bodies), each under
//! `catch_unwind`. The inputs are valid scenarios mutated one to four times
//! (bytes flipped, lines deleted, duplicated or swapped, tokens swapped,
//! numbers replaced by nan, inf, -0, 1e308, -1, 0, huge integers…, strings
//! replaced by empty or random Unicode, keys renamed, known keys inserted
//! with odd values, the text cut short), plus random bytes, random UTF-8
//! and random TOML-like token soup.
//!
//! Asserted for every input: no panic; every error's message and Display
//! are non-empty and name the file given to `parse`; no message shows NaN
//! or ∞ unless the input itself spells one; a scenario that parses has
//! finite, positive sizes and band. The run prints its case counts; about
//! 2 s in release on one core.
use lathe::scenario::{Scenario, ScenarioError};
use std::panic::{catch_unwind, AssertUnwindSafe};

/// Mutated scenarios (`LATHE_FUZZ_CASES` overrides, for longer runs by
/// hand).
const MUTATED_CASES: usize = 20_000;
/// Random bytes, random UTF-8 and token soup, each (an eighth of the
/// mutated cases when overridden).
const RANDOM_CASES: usize = 1_500;
/// Largest solver grid on which `problem()` is called (memory and time).
const PROBLEM_CELLS: usize = 20_000;
/// `problem()` meshes one in this many of the scenarios that reach it:
/// filling a grid cut by a cone or polygon costs up to ~15 ms.
const PROBLEM_EVERY: usize = 4;
/// The seed (`LATHE_FUZZ_SEED` overrides, for longer runs by hand).
const SEED: u64 = 0x6c61_7468_6520_0001;
const FILE: &str = "fuzz.toml";

/// xorshift64* (S. Vigna, "An experimental exploration of Marsaglia's
/// xorshift generators, scrambled", ACM TOMS 42, 2016; shifts 12, 25, 27
/// and the multiplier from that paper, from memory). Quality is ample for
/// choosing mutations.
struct Rng(u64);

impl Rng {
    fn next(&mut self) -> u64 {
        let mut x = self.0;
        x ^= x >> 12;
        x ^= x << 25;
        x ^= x >> 27;
        self.0 = x;
        x.wrapping_mul(0x2545_f491_4f6c_dd1d)
    }
    fn below(&mut self, n: usize) -> usize {
        (self.next() % n.max(1) as u64) as usize
    }
    fn pick<'a, T>(&mut self, items: &'a [T]) -> &'a T {
        &items[self.below(items.len())]
    }
    fn chance(&mut self, percent: u64) -> bool {
        self.next() % 100 < percent
    }
}

/// Valid scenarios of our own to start from.
const SEEDS: [&str; 4] = [
    // A puck on a support ring in a closed can, the cell given.
    r#"[region]
radius = 8.3
z_min = 0.0
z_max = 9.1
cell = 0.37
[boundary]
outer = "pec"
bottom = "pec"
top = "pmc"
[[body]]
shape = "ring"
inner_radius = 0.9
outer_radius = 2.6
height = 2.1
base = 0.0
eps_r = 2.05
[[body]]
shape = "cylinder"
radius = 3.4
height = 2.7
base = 2.1
eps_r = 29.7
loss_tangent = 2e-4
[search]
m = [0, 1, 2]
f_min = 6.3
f_max = 10.9
"#,
    // A hemisphere on a ground plane, the region drawn by lathe.
    r#"[boundary]
bottom = "pec"
[[body]]
shape = "sphere"
radius = 2.7
center = 0.0
eps_r = 15.3
[search]
m = [1]
f_min = 7.1
f_max = 11.9
max_periods = 900
"#,
    // An isolated cylinder, absorbers all round (solved as two halves).
    r#"[region]
radius = 11.0
z_min = -9.5
z_max = 9.5
cells_per_wavelength = 9
[boundary]
outer = "pml"
bottom = "pml"
top = "pml"
pml_cells = 8
pml_order = 2.5
pml_reflection = 3e-7
[[body]]
shape = "cylinder"
radius = 4.4
height = 3.1
base = -1.55
eps_r = 24.1
[search]
m = 0
f_min = 5.9
f_max = 8.8
symmetry = "auto"
"#,
    // A cone and a polygon, open at the side.
    r#"[region]
radius = 7.6
z_min = 0.0
z_max = 8.2
cell = 0.73
[boundary]
outer = "pml"
bottom = "pec"
top = "pmc"
pml_cells = 6
[[body]]
shape = "cone"
radius_bottom = 2.9
radius_top = 0.8
height = 3.3
base = 0.0
eps_r = 6.15
[[body]]
shape = "polygon"
points = [[3.6, 0.0], [5.9, 0.0], [5.9, 1.3], [4.4, 2.2], [3.6, 1.0]]
conductor = "pec"
[search]
m = [0, 2]
f_min = 9.4
f_max = 17.3
symmetry = "none"
"#,
];

const ODD_NUMBERS: [&str; 24] = [
    "nan",
    "-nan",
    "inf",
    "-inf",
    "+inf",
    "-0",
    "-0.0",
    "0",
    "0.0",
    "-1",
    "1e308",
    "-1e308",
    "1e-308",
    "5e-324",
    "9223372036854775807",
    "-9223372036854775808",
    "99999999999999999999",
    "1e15",
    "4.7e9",
    "0.0001",
    "2.5",
    "65",
    "200",
    "1_000",
];

const ODD_VALUES: [&str; 12] = [
    "\"\"",
    "\"pec\"",
    "\"PML\"",
    "\"cylinder\"",
    "[]",
    "[[]]",
    "[1, \"a\"]",
    "{}",
    "true",
    "1979-05-27T07:32:00Z",
    "'literal'",
    "\"\\u00e9\"",
];

const KEYS: [&str; 30] = [
    "radius",
    "z_min",
    "z_max",
    "cell",
    "cells_per_wavelength",
    "outer",
    "bottom",
    "top",
    "pml_cells",
    "pml_order",
    "pml_reflection",
    "shape",
    "height",
    "base",
    "eps_r",
    "loss_tangent",
    "conductor",
    "inner_radius",
    "outer_radius",
    "center",
    "radius_bottom",
    "radius_top",
    "points",
    "m",
    "f_min",
    "f_max",
    "max_periods",
    "symmetry",
    "region",
    "body",
];

const LINES: [&str; 10] = [
    "[region]",
    "[boundary]",
    "[search]",
    "[[body]]",
    "[body]",
    "[[search]]",
    "[region.cell]",
    "points = [[0, 0], [1, 0], [0, 1], [1, 1]]",
    "points = [[0.0, 0.0], [1e6, 0.0], [1e6, 1e6], [0.0, 1e6]]",
    "shape = \"polygon\"",
];

const CHARS: [char; 24] = [
    'é', 'λ', 'ε', '€', '𝜀', '\u{0}', '\u{202e}', '\u{feff}', '\n', '\r', '\t', '"', '[', ']', '=',
    '#', '\\', '.', ',', '\'', '{', '}', '-', ' ',
];

fn random_char(rng: &mut Rng) -> char {
    if rng.chance(60) {
        *rng.pick(&CHARS)
    } else {
        loop {
            let cp = if rng.chance(50) {
                rng.below(0x80) as u32
            } else {
                rng.below(0x11_0000) as u32
            };
            if let Some(c) = char::from_u32(cp) {
                return c;
            }
        }
    }
}

/// Byte ranges of the number tokens of a text.
fn number_spans(text: &str) -> Vec<(usize, usize)> {
    let b = text.as_bytes();
    let mut out = Vec::new();
    let mut i = 0;
    while i < b.len() {
        let starts =
            b[i].is_ascii_digit() || (b[i] == b'-' && i + 1 < b.len() && b[i + 1].is_ascii_digit());
        if starts && (i == 0 || !b[i - 1].is_ascii_alphanumeric() && b[i - 1] != b'_') {
            let s = i;
            i += 1;
            while i < b.len()
                && (b[i].is_ascii_digit()
                    || matches!(b[i], b'.' | b'e' | b'E' | b'-' | b'+' | b'_'))
            {
                i += 1;
            }
            out.push((s, i));
        } else {
            i += 1;
        }
    }
    out
}

/// Byte ranges of the double-quoted strings (quotes included).
fn string_spans(text: &str) -> Vec<(usize, usize)> {
    let mut out = Vec::new();
    let mut open = None;
    for (i, c) in text.char_indices() {
        if c == '"' {
            match open.take() {
                None => open = Some(i),
                Some(s) => out.push((s, i + 1)),
            }
        } else if c == '\n' {
            open = None;
        }
    }
    out
}

fn mutate(rng: &mut Rng, text: &str) -> String {
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    let joined = |lines: &[String]| lines.join("\n") + "\n";
    match rng.below(15) {
        12..=14 => {
            // Scale a number: mostly still a valid scenario, now with thin
            // bodies, coarse or fine cells, thick absorbers, odd bands.
            let spans = number_spans(text);
            if spans.is_empty() {
                return text.to_string();
            }
            let (s, e) = *rng.pick(&spans);
            let Ok(x) = text[s..e].replace('_', "").parse::<f64>() else {
                return text.to_string();
            };
            let factor = *rng.pick(&[0.01, 0.1, 0.3, 0.5, 0.9, 1.1, 1.7, 3.0, 10.0, 1e3, -1.0]);
            format!("{}{}{}", &text[..s], x * factor, &text[e..])
        }
        0 => {
            // Flip bytes (the result may not be UTF-8: read it lossily).
            let mut b = text.as_bytes().to_vec();
            if !b.is_empty() {
                for _ in 0..1 + rng.below(3) {
                    let i = rng.below(b.len());
                    b[i] = if rng.chance(50) {
                        b[i] ^ (1 << rng.below(8))
                    } else {
                        rng.next() as u8
                    };
                }
            }
            String::from_utf8_lossy(&b).into_owned()
        }
        1 if !lines.is_empty() => {
            lines.remove(rng.below(lines.len()));
            joined(&lines)
        }
        2 if !lines.is_empty() => {
            let i = rng.below(lines.len());
            let l = lines[i].clone();
            lines.insert(rng.below(lines.len() + 1), l);
            joined(&lines)
        }
        3 if lines.len() > 1 => {
            let (i, j) = (rng.below(lines.len()), rng.below(lines.len()));
            lines.swap(i, j);
            joined(&lines)
        }
        4 => {
            // Swap two whitespace-separated tokens.
            let mut toks: Vec<&str> = text.split(' ').collect();
            if toks.len() > 1 {
                let (i, j) = (rng.below(toks.len()), rng.below(toks.len()));
                toks.swap(i, j);
            }
            toks.join(" ")
        }
        5 | 6 => {
            let spans = number_spans(text);
            if spans.is_empty() {
                return text.to_string();
            }
            let (s, e) = *rng.pick(&spans);
            let new = if rng.chance(80) {
                rng.pick(&ODD_NUMBERS).to_string()
            } else {
                rng.pick(&ODD_VALUES).to_string()
            };
            format!("{}{new}{}", &text[..s], &text[e..])
        }
        7 => {
            let spans = string_spans(text);
            if spans.is_empty() {
                return text.to_string();
            }
            let (s, e) = *rng.pick(&spans);
            let inner: String = (0..rng.below(6)).map(|_| random_char(rng)).collect();
            let new = if rng.chance(30) {
                "\"\"".to_string()
            } else {
                format!("\"{}\"", inner.replace(['"', '\\', '\n', '\r'], ""))
            };
            format!("{}{new}{}", &text[..s], &text[e..])
        }
        8 => {
            // Insert random characters at a char boundary.
            let idx: Vec<usize> = text.char_indices().map(|(i, _)| i).collect();
            let at = if idx.is_empty() { 0 } else { *rng.pick(&idx) };
            let ins: String = (0..1 + rng.below(4)).map(|_| random_char(rng)).collect();
            format!("{}{ins}{}", &text[..at], &text[at..])
        }
        9 => {
            // Cut the text short.
            let idx: Vec<usize> = text.char_indices().map(|(i, _)| i).collect();
            let at = if idx.is_empty() { 0 } else { *rng.pick(&idx) };
            text[..at].to_string()
        }
        10 => {
            // Insert a known key (or a header line) with an odd value.
            let line = if rng.chance(25) {
                rng.pick(&LINES).to_string()
            } else {
                let v = if rng.chance(70) {
                    rng.pick(&ODD_NUMBERS)
                } else {
                    rng.pick(&ODD_VALUES)
                };
                format!("{} = {v}", rng.pick(&KEYS))
            };
            lines.insert(rng.below(lines.len() + 1), line);
            joined(&lines)
        }
        _ => {
            // Rename a key.
            let with_key: Vec<usize> = (0..lines.len())
                .filter(|&i| lines[i].contains(" = "))
                .collect();
            if with_key.is_empty() {
                return text.to_string();
            }
            let i = *rng.pick(&with_key);
            let rest = lines[i].split_once(" = ").map(|x| x.1.to_string()).unwrap();
            lines[i] = format!("{} = {rest}", rng.pick(&KEYS));
            joined(&lines)
        }
    }
}

/// Non-finite numbers as Rust or TOML spell them, lower-cased.
fn non_finite_words(s: &str) -> Vec<String> {
    s.split(|c: char| !c.is_alphanumeric())
        .map(str::to_lowercase)
        .filter(|w| w == "nan" || w == "inf" || w == "infinity")
        .collect()
}

/// A message without its `backtick-quoted` parts (syntax the TOML reader
/// names, such as "expected `inf`", not a value computed by lathe).
fn unquoted(s: &str) -> String {
    s.split('`').step_by(2).collect::<Vec<_>>().join(" ")
}

/// What a failing input did wrong.
fn check_error(e: &ScenarioError, input: &str, from_parse: bool) -> Result<(), String> {
    let shown = e.to_string();
    if e.message.trim().is_empty() || shown.trim().is_empty() {
        return Err(format!("an empty message: {e:?}"));
    }
    if from_parse && e.file != FILE {
        return Err(format!("the message does not name the file: {shown}"));
    }
    let written = non_finite_words(input);
    for w in non_finite_words(&unquoted(&shown)) {
        if !written.contains(&w) {
            return Err(format!(
                "shows '{w}', which the input does not contain: {shown}"
            ));
        }
    }
    Ok(())
}

#[derive(Default)]
struct Tally {
    cases: usize,
    parsed: usize,
    gridded: usize,
    small: usize,
    meshed: usize,
}

/// Every stage the input reaches; `Err` says what broke a property.
fn exercise(input: &str, tally: &mut Tally) -> Result<(), String> {
    let s = match Scenario::parse(input, FILE) {
        Ok(s) => s,
        Err(e) => return check_error(&e, input, true),
    };
    tally.parsed += 1;
    let h = s.cell_size();
    let sane = s.radius > 0.0
        && s.radius.is_finite()
        && s.z_min.is_finite()
        && s.z_max.is_finite()
        && s.z_max > s.z_min
        && h > 0.0
        && h.is_finite()
        && s.f_min > 0.0
        && s.f_max > s.f_min
        && s.f_max.is_finite()
        && !s.m.is_empty();
    if !sane {
        return Err(format!("accepted a scenario that is not sane: {s:?}"));
    }
    let grid = match s.grid() {
        Ok(g) => g,
        Err(e) => return check_error(&e, input, false),
    };
    tally.gridded += 1;
    if let Err(e) = s.check_resolution(&grid) {
        check_error(&e, input, false)?;
    }
    for w in s.warnings(&grid) {
        if w.trim().is_empty()
            || non_finite_words(&w)
                .iter()
                .any(|x| !non_finite_words(input).contains(x))
        {
            return Err(format!("a bad warning: '{w}'"));
        }
    }
    let _ = lathe::study::halves(&s);
    let sg = match s.solver_grid() {
        Ok(g) => g,
        Err(e) => return check_error(&e, input, false),
    };
    tally.small += usize::from(sg.nr * sg.nz <= PROBLEM_CELLS);
    if sg.nr * sg.nz <= PROBLEM_CELLS && tally.small % PROBLEM_EVERY == 0 {
        match s.problem() {
            Ok(p) => {
                tally.meshed += 1;
                if !(p.f_min > 0.0 && p.f_max > p.f_min) {
                    return Err("a problem with a bad band".into());
                }
            }
            Err(e) => check_error(&e, input, false)?,
        }
    }
    Ok(())
}

fn run(input: &str, tally: &mut Tally, failures: &mut Vec<String>) {
    tally.cases += 1;
    let outcome = catch_unwind(AssertUnwindSafe(|| exercise(input, tally)));
    let problem = match outcome {
        Ok(Ok(())) => return,
        Ok(Err(why)) => why,
        Err(_) => "panicked".to_string(),
    };
    if failures.len() < 10 {
        let shown: String = input.chars().take(2000).collect();
        failures.push(format!("{problem}\n--- input ---\n{shown}\n-------------"));
    } else {
        failures.push(problem);
    }
}

#[test]
fn the_seed_scenarios_are_valid_and_mesh() {
    for (k, text) in SEEDS.iter().enumerate() {
        let s = Scenario::parse(text, FILE).unwrap_or_else(|e| panic!("seed {k}: {e}"));
        let g = s.solver_grid().unwrap();
        assert!(
            g.nr * g.nz <= PROBLEM_CELLS,
            "seed {k}: {} cells",
            g.nr * g.nz
        );
        s.problem().unwrap_or_else(|e| panic!("seed {k}: {e}"));
    }
}

#[test]
fn no_input_makes_the_scenario_reader_panic() {
    let env = |name: &str| std::env::var(name).ok().and_then(|v| v.parse::<u64>().ok());
    let seed = env("LATHE_FUZZ_SEED").unwrap_or(SEED) | 1;
    let mutated = env("LATHE_FUZZ_CASES").map_or(MUTATED_CASES, |n| n as usize);
    let random = if mutated == MUTATED_CASES {
        RANDOM_CASES
    } else {
        mutated / 8
    };
    let mut rng = Rng(seed);
    let mut tally = Tally::default();
    let mut failures = Vec::new();
    let start = std::time::Instant::now();
    for _ in 0..mutated {
        let mut text = rng.pick(&SEEDS).to_string();
        // One mutation half the time, up to four otherwise.
        let count = if rng.chance(50) { 1 } else { 2 + rng.below(3) };
        for _ in 0..count {
            text = mutate(&mut rng, &text);
        }
        run(&text, &mut tally, &mut failures);
    }
    for _ in 0..random {
        let n = rng.below(300);
        let bytes: Vec<u8> = (0..n).map(|_| rng.next() as u8).collect();
        run(&String::from_utf8_lossy(&bytes), &mut tally, &mut failures);
        let text: String = (0..n).map(|_| random_char(&mut rng)).collect();
        run(&text, &mut tally, &mut failures);
        // Token soup: pieces of scenario syntax in random order.
        let mut soup = String::new();
        for _ in 0..rng.below(40) {
            let piece: &str = match rng.below(5) {
                0 => rng.pick::<&str>(&LINES),
                1 => rng.pick::<&str>(&KEYS),
                2 => rng.pick::<&str>(&ODD_NUMBERS),
                3 => rng.pick::<&str>(&ODD_VALUES),
                _ => "",
            };
            soup.push_str(piece);
            if piece.is_empty() {
                soup.push(random_char(&mut rng));
            }
            soup.push(*rng.pick(&[' ', '\n', '=', ',']));
        }
        run(&soup, &mut tally, &mut failures);
    }
    println!(
        "fuzz_scenario: {} cases from seed {seed:#x}: {} parsed, {} gridded, {} meshed, {} failed, {:.2} s",
        tally.cases,
        tally.parsed,
        tally.gridded,
        tally.meshed,
        failures.len(),
        start.elapsed().as_secs_f64()
    );
    assert!(
        failures.is_empty(),
        "{} of {} inputs broke a property; the first:\n\n{}",
        failures.len(),
        tally.cases,
        failures[..failures.len().min(10)].join("\n\n")
    );
    // The mutations must reach the mesher often, or the test says little
    // about grid() and problem().
    assert!(
        tally.meshed * 50 >= mutated,
        "only {} of {mutated} mutated inputs were meshed",
        tally.meshed
    );
}
