//! The `lathe` command.
//!
//! Exit codes: 0 success; 2 bad input or arguments; 1 a run that failed
//! (unstable, non-finite, or no mode found in the band).
use clap::{Parser, Subcommand};
use lathe::output;
use lathe::scenario::{Scenario, ScenarioError};
use lathe::study::{run_count, run_study_with, StudyError, StudyOptions, DEFAULT_MAX_MEMORY};
use std::path::PathBuf;
use std::process::ExitCode;

#[derive(Parser)]
#[command(
    name = "lathe",
    version,
    about = "Resonances of bodies of revolution by BOR-FDTD"
)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Find the modes of a scenario and print them.
    Modes {
        /// Scenario file (TOML).
        file: PathBuf,
        /// Azimuthal orders to search, overriding the file (e.g. 0,1).
        #[arg(long, value_delimiter = ',')]
        m: Option<Vec<u32>>,
        /// Write everything into the results folder DIR: modes.json,
        /// modes.csv, fields.h5 and plots/ (created if missing).
        #[arg(long, value_name = "DIR")]
        out: Option<PathBuf>,
        /// Write results as JSON to PATH ("-" for standard output).
        #[arg(long, value_name = "PATH")]
        json: Option<PathBuf>,
        /// Write the mode table as CSV to PATH ("-" for standard output).
        #[arg(long, value_name = "PATH")]
        csv: Option<PathBuf>,
        /// Write the complex field of every mode to an HDF5 file.
        #[arg(long, value_name = "PATH.h5")]
        fields: Option<PathBuf>,
        /// Draw the pictures into DIR: a field map of each mode (PNG) and
        /// the probe spectrum of each run with the modes marked.
        #[arg(long, value_name = "DIR")]
        plots: Option<PathBuf>,
        /// Field maps show the full cross-section (−r … r).
        #[arg(long)]
        mirror: bool,
        /// Also an animated GIF of one period of each mode's field.
        #[arg(long)]
        animate: bool,
        /// Also an SVG of each field map.
        #[arg(long)]
        svg: bool,
        /// Memory cap for the runs that step at once, e.g. 6G, 800M
        /// (binary units; a bare number is MiB). Default 4G.
        #[arg(long, value_name = "SIZE", value_parser = parse_size)]
        max_memory: Option<usize>,
        /// Worker threads (default: all cores).
        #[arg(long)]
        threads: Option<usize>,
        /// Print nothing but the results.
        #[arg(long)]
        quiet: bool,
        /// Also show the closed-form fits for a plain cylinder beside the
        /// full-wave modes.
        #[arg(long)]
        compare_formulas: bool,
        /// Solve on three grids (cells per wavelength ×1, ×√2, ×2) and report
        /// Richardson-extrapolated f and Q with uncertainties.
        #[arg(long)]
        refine: bool,
    },
    /// Measure this machine's stepping rate on a standard case (to size
    /// sweeps: a run costs its `cell_updates` divided by this rate).
    Bench {
        /// Seconds to time each case.
        #[arg(long, default_value_t = 1.0)]
        seconds: f64,
    },
    /// Print the plan of each run without stepping any field: grid, time
    /// step, absorber, sources and probes, memory, estimated run time, and
    /// every warning.
    Check {
        /// Scenario file (TOML).
        file: PathBuf,
        /// Azimuthal orders, overriding the file.
        #[arg(long, value_delimiter = ',')]
        m: Option<Vec<u32>>,
        /// Worker threads the estimate assumes (default: all cores).
        #[arg(long)]
        threads: Option<usize>,
        /// Memory cap to check against (as for `lathe modes`).
        #[arg(long, value_name = "SIZE", value_parser = parse_size)]
        max_memory: Option<usize>,
        /// Skip the short timing of this machine's stepping rate (and with
        /// it the run-time estimate).
        #[arg(long)]
        no_timing: bool,
    },
}

/// A memory size: a number with an optional binary suffix K, M, G, T
/// (KiB … TiB; "B" and "iB" accepted after it); a bare number is MiB.
fn parse_size(text: &str) -> Result<usize, String> {
    let t = text.trim();
    let lower = t.to_ascii_lowercase();
    let body = lower
        .strip_suffix("ib")
        .or_else(|| lower.strip_suffix('b'))
        .unwrap_or(&lower);
    let (num, scale) = match body.chars().last() {
        Some('k') => (&body[..body.len() - 1], 1u64 << 10),
        Some('m') => (&body[..body.len() - 1], 1 << 20),
        Some('g') => (&body[..body.len() - 1], 1 << 30),
        Some('t') => (&body[..body.len() - 1], 1 << 40),
        _ => (body, 1 << 20),
    };
    let x: f64 = num
        .trim()
        .parse()
        .map_err(|_| format!("{t:?} is not a memory size; write e.g. 6G, 800M or 1.5G"))?;
    if !(x.is_finite() && x > 0.0) {
        return Err(format!("{t:?}: the memory cap must be a positive size"));
    }
    let bytes = x * scale as f64;
    if bytes < 1048576.0 || bytes > usize::MAX as f64 {
        return Err(format!(
            "{t:?}: the memory cap must be between 1M and {}T",
            usize::MAX >> 40
        ));
    }
    Ok(bytes as usize)
}

/// The standard cases of `lathe bench`: our isolated ε_r 44.7 puck
/// (examples/isolated_puck.toml, upper half over a PEC plane, m = 1) at the
/// default grid, and the same puck on a grid refined to about a million
/// cells (where a single run splits its rows over the threads).
const BENCH_SCENARIO: &str = include_str!("../examples/isolated_puck.toml");

fn bench(seconds: f64) -> Result<(), Failure> {
    let base = Scenario::parse(BENCH_SCENARIO, "examples/isolated_puck.toml")
        .map_err(|e| Failure::Run(format!("the built-in benchmark case does not parse: {e}")))?;
    let cores = std::thread::available_parallelism().map_or(1, |n| n.get());
    emit(&format!(
        "lathe bench: full leapfrog step (H, E, absorber) of the isolated ε_r 44.7 puck, m = 1, f64; {cores} core(s) seen\n"
    ));
    emit(&format!(
        "{:>14} {:>9} {:>8} {:>16} {:>12}\n",
        "grid", "cells", "threads", "cell updates/s", "ns per cell"
    ));
    for cpw in [30.0, 180.0] {
        let mut s = base.clone();
        s.cells_per_wavelength = cpw;
        let (half, _) = lathe::study::halves(&s)
            .ok_or_else(|| Failure::Run("the benchmark case is not symmetric".into()))?;
        let problem = half
            .problem()
            .map_err(|e| Failure::Run(format!("benchmark case: {e}")))?;
        let p = lathe::solver::plan(&problem, 1).map_err(|e| Failure::Run(e.to_string()))?;
        let g = &problem.materials.grid;
        let mut threads = vec![1];
        if cores > 1 {
            threads.push(cores);
        }
        for t in threads {
            let rate = pool(Some(t))?
                .install(|| lathe::solver::bench::step_rate(&problem, 1, p.dt, seconds));
            emit(&format!(
                "{:>14} {:>9} {:>8} {:>16.3e} {:>12.2}\n",
                format!("{} × {}", g.nr, g.nz),
                g.cells(),
                t,
                rate,
                1e9 / rate
            ));
        }
    }
    emit("Several orders or halves run side by side, one per thread; a single large run splits its rows over the threads.\n");
    Ok(())
}

enum Failure {
    Input(String),
    Run(String),
}

/// Writes to standard output; a closed pipe (`lathe modes … | head`) ends
/// the program quietly, as for any command-line filter.
fn emit(text: &str) {
    use std::io::Write;
    let mut out = std::io::stdout().lock();
    if let Err(e) = out.write_all(text.as_bytes()).and_then(|_| out.flush()) {
        if e.kind() == std::io::ErrorKind::BrokenPipe {
            std::process::exit(0);
        }
        eprintln!("error: cannot write the results: {e}");
        std::process::exit(1);
    }
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    match real_main(cli) {
        Ok(()) => ExitCode::SUCCESS,
        Err(Failure::Input(msg)) => {
            eprintln!("error: {msg}");
            ExitCode::from(2)
        }
        Err(Failure::Run(msg)) => {
            eprintln!("error: {msg}");
            ExitCode::from(1)
        }
    }
}

fn load(file: &PathBuf, m: &Option<Vec<u32>>) -> Result<Scenario, Failure> {
    let name = file.display().to_string();
    let text = std::fs::read_to_string(file)
        .map_err(|e| Failure::Input(format!("{name}: cannot read the scenario: {e}")))?;
    let mut s = Scenario::parse(&text, &name).map_err(|e| Failure::Input(e.to_string()))?;
    if let Some(ms) = m {
        if ms.is_empty() {
            return Err(Failure::Input("--m: the list is empty".into()));
        }
        if let Some(bad) = ms.iter().find(|&&m| m > 64) {
            return Err(Failure::Input(format!(
                "--m {bad}: azimuthal orders are whole numbers from 0 to 64"
            )));
        }
        let mut ms = ms.clone();
        ms.sort_unstable();
        ms.dedup();
        s.m = ms;
    }
    Ok(s)
}

fn failure(e: StudyError, name: &str) -> Failure {
    match e {
        StudyError::Input(e) => Failure::Input(
            ScenarioError {
                file: name.to_string(),
                ..e
            }
            .to_string(),
        ),
        StudyError::Run(
            e @ (lathe::solver::SolverError::TooMuchMemory { .. }
            | lathe::solver::SolverError::NothingToSolve { .. }
            | lathe::solver::SolverError::Placement { .. }),
        ) => Failure::Input(format!("{name}: {e}")),
        StudyError::Run(e) => Failure::Run(e.to_string()),
        StudyError::TooBig(msg) => Failure::Input(format!("{name}: {msg}")),
    }
}

fn problem_of(s: &Scenario, name: &str) -> Result<lathe::solver::Problem, Failure> {
    s.problem().map_err(|e: ScenarioError| {
        Failure::Input(
            ScenarioError {
                file: name.to_string(),
                ..e
            }
            .to_string(),
        )
    })
}

fn pool(threads: Option<usize>) -> Result<rayon::ThreadPool, Failure> {
    if threads == Some(0) {
        return Err(Failure::Input("--threads 0: must be at least 1".into()));
    }
    rayon::ThreadPoolBuilder::new()
        .num_threads(threads.unwrap_or(0))
        .build()
        .map_err(|e| Failure::Run(format!("cannot start worker threads: {e}")))
}

/// Where `lathe modes` writes, checked before any run starts so that a long
/// run never ends in an unwritable path.
struct Outputs {
    json: Option<PathBuf>,
    csv: Option<PathBuf>,
    fields: Option<PathBuf>,
    plots: Option<PathBuf>,
}

impl Outputs {
    fn new(
        out: Option<PathBuf>,
        json: Option<PathBuf>,
        csv: Option<PathBuf>,
        fields: Option<PathBuf>,
        plots: Option<PathBuf>,
    ) -> Result<Outputs, Failure> {
        let mut o = Outputs {
            json,
            csv,
            fields,
            plots,
        };
        if let Some(dir) = out {
            std::fs::create_dir_all(&dir).map_err(|e| {
                Failure::Input(format!(
                    "--out {}: cannot create the results folder: {e}",
                    dir.display()
                ))
            })?;
            if !dir.is_dir() {
                return Err(Failure::Input(format!(
                    "--out {}: exists and is not a folder",
                    dir.display()
                )));
            }
            o.json.get_or_insert(dir.join("modes.json"));
            o.csv.get_or_insert(dir.join("modes.csv"));
            o.fields.get_or_insert(dir.join("fields.h5"));
            o.plots.get_or_insert(dir.join("plots"));
        }
        if let Some(dir) = &o.plots {
            std::fs::create_dir_all(dir).map_err(|e| {
                Failure::Input(format!(
                    "--plots {}: cannot create the folder: {e}",
                    dir.display()
                ))
            })?;
        }
        if o.fields.as_deref().is_some_and(|p| p.as_os_str() == "-") {
            return Err(Failure::Input(
                "--fields -: the field file is binary HDF5; give a file name".into(),
            ));
        }
        for (flag, path) in [
            ("--json", &o.json),
            ("--csv", &o.csv),
            ("--fields", &o.fields),
        ] {
            if let Some(p) = path {
                writable(flag, p)?;
            }
        }
        Ok(o)
    }
}

/// Checks that a file can be created at `path` ("-" is standard output):
/// its folder exists and is a folder, and the path is not a folder.
fn writable(flag: &str, path: &std::path::Path) -> Result<(), Failure> {
    if path.as_os_str() == "-" {
        return Ok(());
    }
    if path.is_dir() {
        return Err(Failure::Input(format!(
            "{flag} {}: is a folder; give a file name",
            path.display()
        )));
    }
    let parent = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => std::path::Path::new("."),
    };
    if !parent.is_dir() {
        return Err(Failure::Input(format!(
            "{flag} {}: the folder {} does not exist",
            path.display(),
            parent.display()
        )));
    }
    Ok(())
}

fn write_file(flag: &str, path: &std::path::Path, text: &str) -> Result<(), Failure> {
    if path.as_os_str() == "-" {
        emit(text);
        Ok(())
    } else {
        std::fs::write(path, text)
            .map_err(|e| Failure::Input(format!("{flag} {}: cannot write: {e}", path.display())))
    }
}

fn real_main(cli: Cli) -> Result<(), Failure> {
    match cli.command {
        Command::Bench { seconds } => {
            if !(seconds.is_finite() && seconds > 0.0 && seconds <= 600.0) {
                return Err(Failure::Input(format!(
                    "--seconds {seconds}: give a time between 0 and 600 s"
                )));
            }
            bench(seconds)
        }
        Command::Check {
            file,
            m,
            threads,
            max_memory,
            no_timing,
        } => {
            let s = load(&file, &m)?;
            let name = file.display().to_string();
            let options = StudyOptions {
                max_memory: max_memory.unwrap_or(DEFAULT_MAX_MEMORY),
            };
            let text = pool(threads)?
                .install(|| output::plan_text(&s, &options, !no_timing))
                .map_err(|e| failure(e, &name))?;
            emit(&text);
            Ok(())
        }
        Command::Modes {
            file,
            m,
            out,
            json,
            csv,
            fields,
            plots,
            mirror,
            animate,
            svg,
            max_memory,
            threads,
            quiet,
            compare_formulas,
            refine,
        } => {
            let s = load(&file, &m)?;
            let name = file.display().to_string();
            let problem = problem_of(&s, &name)?;
            let pool = pool(threads)?;
            let outputs = Outputs::new(out, json, csv, fields, plots)?;
            let options = StudyOptions {
                max_memory: max_memory.unwrap_or(DEFAULT_MAX_MEMORY),
            };
            if !quiet {
                let g = &problem.materials.grid;
                eprintln!(
                    "lathe: {} × {} cells of {:.4} × {:.4} mm, orders m = {:?}, band {:.4}–{:.4} GHz",
                    g.nr,
                    g.nz,
                    g.dr * 1e3,
                    g.dz * 1e3,
                    s.m,
                    s.f_min / 1e9,
                    s.f_max / 1e9
                );
            }
            drop(problem);
            if refine {
                let r = pool
                    .install(|| lathe::refine::refine(&s))
                    .map_err(|e| failure(e, &name))?;
                emit(&output::refined_table(&r));
                if let Some(path) = &outputs.json {
                    let doc = serde_json::to_string_pretty(&output::refined_json(&r))
                        .expect("JSON of plain numbers");
                    write_file("--json", path, &(doc + "\n"))?;
                }
                if r.modes.is_empty() {
                    return Err(Failure::Run(
                        "no mode was found on all three grids; check the band or the plain run"
                            .into(),
                    ));
                }
                return Ok(());
            }
            let bar = lathe::progress::Bar::new(run_count(&s), quiet);
            let study = pool.install(|| run_study_with(&s, &options, &bar));
            bar.finish();
            let study = study.map_err(|e| failure(e, &name))?;
            let runs: Vec<&lathe::solver::RunOutput> =
                study.runs.iter().map(|r| &r.output).collect();
            for r in &runs {
                if !r.report.converged && !quiet {
                    eprintln!(
                        "warning: run m = {} reached its maximum length ({} samples) before the modes settled; raise search.max_periods",
                        r.report.m, r.report.samples
                    );
                }
            }
            let bad = runs
                .iter()
                .flat_map(|r| &r.modes)
                .any(|m| !(m.freq_hz.is_finite() && m.q.is_finite() && m.error.is_finite()));
            if bad {
                return Err(Failure::Run(
                    "a mode came out with a non-finite figure; this is a bug, please report the scenario".into(),
                ));
            }
            emit(&output::table(&study));
            if compare_formulas {
                emit(&lathe::formulas::comparison_text(&s, &study));
            }
            if let Some(path) = &outputs.json {
                let doc = serde_json::to_string_pretty(&output::json(&study))
                    .expect("JSON of plain numbers");
                write_file("--json", path, &(doc + "\n"))?;
            }
            if let Some(path) = &outputs.csv {
                write_file("--csv", path, &output::csv(&study))?;
            }
            if let Some(path) = &outputs.fields {
                let n = lathe::fieldfile::write_study(path, &study)
                    .map_err(|e| Failure::Input(format!("--fields: {e}")))?;
                if !quiet {
                    eprintln!(
                        "lathe: wrote the fields of {n} mode(s) to {}",
                        path.display()
                    );
                }
            }
            if let Some(dir) = &outputs.plots {
                let opts = lathe::plots::SetOptions {
                    animate,
                    svg,
                    mirror,
                };
                let written = lathe::plots::write_study(&study, &s, dir, &opts)
                    .map_err(|e| Failure::Input(format!("--plots: {e}")))?;
                if !quiet {
                    eprintln!(
                        "lathe: drew {} picture(s) in {}",
                        written.files.len(),
                        dir.display()
                    );
                    for why in &written.skipped {
                        eprintln!("lathe: left out {why}");
                    }
                }
            }
            if runs.iter().all(|r| r.modes.is_empty()) {
                return Err(Failure::Run(format!(
                    "no mode found between {:.4} and {:.4} GHz for m = {:?}",
                    s.f_min / 1e9,
                    s.f_max / 1e9,
                    s.m
                )));
            }
            Ok(())
        }
    }
}
