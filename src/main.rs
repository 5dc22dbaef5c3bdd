//! The `lathe` command.
//!
//! Exit codes: 0 success; 2 bad input or arguments; 1 a run that failed
//! (unstable, non-finite, or no mode found in the band).
use clap::{Parser, Subcommand};
use lathe::output;
use lathe::scenario::{Scenario, ScenarioError};
use lathe::study::{run_study, StudyError};
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
        /// Write results as JSON to PATH ("-" for standard output).
        #[arg(long, value_name = "PATH")]
        json: Option<PathBuf>,
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
    /// Print the plan of each run without stepping any field.
    Check {
        /// Scenario file (TOML).
        file: PathBuf,
        /// Azimuthal orders, overriding the file.
        #[arg(long, value_delimiter = ',')]
        m: Option<Vec<u32>>,
    },
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
        let mut ms = ms.clone();
        ms.sort_unstable();
        ms.dedup();
        s.m = ms;
    }
    Ok(s)
}

fn write_json(path: &std::path::Path, doc: String) -> Result<(), Failure> {
    if path.as_os_str() == "-" {
        emit(&format!("{doc}\n"));
        Ok(())
    } else {
        std::fs::write(path, doc + "\n")
            .map_err(|e| Failure::Input(format!("--json {}: cannot write: {e}", path.display())))
    }
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
        StudyError::Run(e) => Failure::Run(e.to_string()),
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

fn real_main(cli: Cli) -> Result<(), Failure> {
    match cli.command {
        Command::Check { file, m } => {
            let s = load(&file, &m)?;
            let name = file.display().to_string();
            emit(&output::plan_text(&s).map_err(|e| failure(e, &name))?);
            Ok(())
        }
        Command::Modes {
            file,
            m,
            json,
            threads,
            quiet,
            compare_formulas,
            refine,
        } => {
            let s = load(&file, &m)?;
            let name = file.display().to_string();
            let problem = problem_of(&s, &name)?;
            if let Some(n) = threads {
                if n == 0 {
                    return Err(Failure::Input("--threads must be at least 1".into()));
                }
            }
            let pool = rayon::ThreadPoolBuilder::new()
                .num_threads(threads.unwrap_or(0))
                .build()
                .map_err(|e| Failure::Run(format!("cannot start worker threads: {e}")))?;
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
            if refine {
                let r = pool
                    .install(|| lathe::refine::refine(&s))
                    .map_err(|e| failure(e, &name))?;
                emit(&output::refined_table(&r));
                if let Some(path) = json {
                    let doc = serde_json::to_string_pretty(&output::refined_json(&r))
                        .expect("JSON of plain numbers");
                    write_json(&path, doc)?;
                }
                if r.modes.is_empty() {
                    return Err(Failure::Run(
                        "no mode was found on all three grids; check the band or the plain run"
                            .into(),
                    ));
                }
                return Ok(());
            }
            let study = pool
                .install(|| run_study(&s))
                .map_err(|e| failure(e, &name))?;
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
            if let Some(path) = json {
                let doc = serde_json::to_string_pretty(&output::json(&study))
                    .expect("JSON of plain numbers");
                write_json(&path, doc)?;
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
