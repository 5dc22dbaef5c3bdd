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
        /// Memory cap for the runs under way at once, e.g. 6G, 800M
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
    /// Radiation of the modes of an open structure: directivity, E- and
    /// H-plane cuts (co- and cross-polar, Ludwig 3), front-to-back ratio,
    /// Q from stored energy and radiated power, bandwidth for VSWR 2.
    Pattern {
        /// Scenario file (TOML).
        file: PathBuf,
        /// Azimuthal orders, overriding the file.
        #[arg(long, value_delimiter = ',')]
        m: Option<Vec<u32>>,
        /// Only this mode: its label (HEM11δ, or HEM11d) or its number in
        /// the radiation table (0, 1, …).
        #[arg(long, value_name = "LABEL|INDEX")]
        mode: Option<String>,
        /// Write, per mode, the cuts (CSV), the figures with the cuts
        /// (JSON), polar charts of both cuts and a (θ, φ) directivity map
        /// (PNG) into DIR.
        #[arg(long, value_name = "DIR")]
        out: Option<PathBuf>,
        /// Angular step of the cuts and the map, degrees.
        #[arg(long, default_value_t = 1.0)]
        step: f64,
        /// Worker threads (default: all cores).
        #[arg(long)]
        threads: Option<usize>,
        /// Print nothing but the results.
        #[arg(long)]
        quiet: bool,
        /// Memory cap, as for `lathe modes`.
        #[arg(long, value_name = "SIZE", value_parser = parse_size)]
        max_memory: Option<usize>,
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
/// default grid (about 10⁴ cells) and at 180 cells per wavelength (about
/// 3 × 10⁵ cells); on more than one thread a run splits its rows over them.
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
    emit("Several orders or halves run side by side, one per thread; a thread with no run left takes half the rows of another, so a single run also uses every core.\n");
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

/// Warns about every run of `study` that left out the curved-surface
/// correction (its frequencies then converge at first order, not second).
fn warn_first_order(study: &lathe::study::Study) {
    for r in &study.runs {
        let p = &r.output.report;
        if let Some(why) = p.surface_correction.and_then(|c| c.reason()) {
            eprintln!(
                "warning: run m = {} left out the curved-surface correction ({why}); its frequencies converge at first order in the cell there, not second",
                p.m
            );
        }
    }
}

/// Runs the study of `s` with a progress bar, warning about runs that hit
/// their maximum length and refusing non-finite results.
fn solve_study(
    s: &Scenario,
    name: &str,
    pool: &rayon::ThreadPool,
    options: &StudyOptions,
    quiet: bool,
) -> Result<lathe::study::Study, Failure> {
    let bar = lathe::progress::Bar::new(run_count(s), quiet);
    let study = pool.install(|| run_study_with(s, options, &bar));
    bar.finish();
    let study = study.map_err(|e| failure(e, name))?;
    for r in &study.runs {
        let r = &r.output;
        if !r.report.converged && !quiet {
            eprintln!(
                "warning: run m = {} reached its maximum length ({} samples) before the modes settled; raise search.max_periods",
                r.report.m, r.report.samples
            );
        }
    }
    if !quiet {
        warn_first_order(&study);
    }
    let bad = study
        .runs
        .iter()
        .flat_map(|r| &r.output.modes)
        .any(|m| !(m.freq_hz.is_finite() && m.q.is_finite() && m.error.is_finite()));
    if bad {
        return Err(Failure::Run(
            "a mode came out with a non-finite figure; this is a bug, please report the scenario"
                .into(),
        ));
    }
    if study.runs.iter().all(|r| r.output.modes.is_empty()) {
        return Err(Failure::Run(format!(
            "no mode found between {:.4} and {:.4} GHz for m = {:?}",
            s.f_min / 1e9,
            s.f_max / 1e9,
            s.m
        )));
    }
    Ok(study)
}

/// The radiation figures of an open study (`None` for a closed one).
fn radiation_of(
    study: &lathe::study::Study,
    s: &Scenario,
    pool: &rayon::ThreadPool,
    step: f64,
) -> Result<Option<lathe::radiation::RadiationStudy>, Failure> {
    let opts = lathe::radiation::RadiationOptions {
        cut_step_deg: step,
        ..Default::default()
    };
    pool.install(|| lathe::radiation::radiation(study, s, &opts))
        .map_err(|e| Failure::Run(format!("radiation: {e}")))
}

fn pattern(
    s: &Scenario,
    name: &str,
    study: &lathe::study::Study,
    rad: &lathe::radiation::RadiationStudy,
    mode: Option<&str>,
    out: Option<&std::path::Path>,
    step: f64,
) -> Result<(), Failure> {
    use lathe::plots::{DirectivityMap, Figure, PolarCut};
    let picked: Vec<(usize, &lathe::radiation::Radiation)> = match mode {
        None => rad.modes.iter().enumerate().collect(),
        Some(key) => {
            let plain = |t: &str| t.replace('δ', "d").to_lowercase();
            let hit: Vec<_> = match key.parse::<usize>() {
                Ok(i) => rad
                    .modes
                    .iter()
                    .enumerate()
                    .filter(|(k, _)| *k == i)
                    .collect(),
                Err(_) => rad
                    .modes
                    .iter()
                    .enumerate()
                    .filter(|(_, r)| plain(&r.label) == plain(key))
                    .collect(),
            };
            if hit.is_empty() {
                let known: Vec<String> = rad
                    .modes
                    .iter()
                    .enumerate()
                    .map(|(k, r)| format!("{k} {}", r.label))
                    .collect();
                return Err(Failure::Input(format!(
                    "--mode {key}: no such radiating mode; the modes are: {}",
                    known.join(", ")
                )));
            }
            hit
        }
    };
    // Number the table's rows so --mode INDEX can be read off it.
    let table = lathe::radiation::table(rad);
    let mut lines = table.lines();
    let mut numbered = format!("  # {}\n", lines.next().unwrap_or(""));
    for (k, line) in lines.enumerate() {
        if k < rad.modes.len() {
            numbered.push_str(&format!("{k:>3} {line}\n"));
        } else {
            numbered.push_str(&format!("    {line}\n"));
        }
    }
    emit(&numbered);
    let Some(dir) = out else {
        if let [(_, one)] = picked.as_slice() {
            emit(&lathe::radiation::cuts_csv(one));
        }
        return Ok(());
    };
    std::fs::create_dir_all(dir).map_err(|e| {
        Failure::Input(format!(
            "--out {}: cannot create the folder: {e}",
            dir.display()
        ))
    })?;
    let probs = lathe::study::problems(s).map_err(|e| Failure::Input(format!("{name}: {e}")))?;
    for (k, r) in picked {
        let stem = format!("{k:02}_{}_m{}", lathe::plots::file_label(&r.label), r.m);
        let path = |suffix: &str| dir.join(format!("{stem}_{suffix}"));
        write_file("--out", &path("cuts.csv"), &lathe::radiation::cuts_csv(r))?;
        let doc = serde_json::to_string_pretty(&r.to_json(true)).expect("JSON of plain numbers");
        write_file("--out", &path("pattern.json"), &(doc + "\n"))?;
        let title = format!(
            "{} · m = {} · {:.4} GHz · D = {:.2} dBi",
            r.label,
            r.m,
            r.freq_hz / 1e9,
            r.directivity_dbi
        );
        let draw = |e: lathe::plots::PlotError| Failure::Input(format!("--out: {e}"));
        for (cut, plane, file) in [
            (&r.cuts.e_plane, "E-plane", "e_plane.png"),
            (&r.cuts.h_plane, "H-plane", "h_plane.png"),
        ] {
            let plane_name = format!("{plane} (φ = {:.1}°)", cut.phi_deg);
            PolarCut::new(
                &cut.theta_deg,
                &cut.co_dbi,
                &cut.cross_dbi,
                &title,
                &plane_name,
            )
            .map_err(draw)?
            .write(path(file))
            .map_err(draw)?;
        }
        // The full (θ, φ) map, from the mode's own radiator.
        let (run, idx) = study
            .runs
            .iter()
            .enumerate()
            .find_map(|(i, sr)| {
                sr.output
                    .modes
                    .iter()
                    .position(|md| md.m == r.m && md.freq_hz == r.freq_hz && sr.plane == r.plane)
                    .map(|k| (i, k))
            })
            .ok_or_else(|| Failure::Run(format!("{}: mode not found in its study", r.label)))?;
        let (_, _, problem) = probs
            .iter()
            .find(|(p, _, _)| *p == study.runs[run].plane)
            .ok_or_else(|| Failure::Run("a run without its problem".into()))?;
        let rad_opts = lathe::radiation::RadiationOptions::default();
        let radiator = lathe::radiation::radiator(study, problem, run, idx, &rad_opts)
            .map_err(|e| Failure::Run(format!("radiation: {e}")))?;
        let n_t = (180.0 / step).round().max(2.0) as usize;
        let n_p = (360.0 / step).round().max(2.0) as usize;
        let thetas: Vec<f64> = (0..=n_t).map(|i| i as f64 * 180.0 / n_t as f64).collect();
        let phis: Vec<f64> = (0..=n_p).map(|i| i as f64 * 360.0 / n_p as f64).collect();
        let rad_t: Vec<f64> = thetas.iter().map(|t| t.to_radians()).collect();
        let rad_p: Vec<f64> = phis.iter().map(|p| p.to_radians()).collect();
        let lin = radiator.directivity_map(&rad_t, &rad_p);
        let dbi: Vec<Vec<f64>> = lin
            .chunks(phis.len())
            .map(|row| row.iter().map(|d| 10.0 * d.max(1e-30).log10()).collect())
            .collect();
        DirectivityMap::new(&thetas, &phis, &dbi, &title)
            .map_err(draw)?
            .write(path("map.png"))
            .map_err(draw)?;
    }
    Ok(())
}

fn real_main(cli: Cli) -> Result<(), Failure> {
    match cli.command {
        Command::Pattern {
            file,
            m,
            mode,
            out,
            step,
            threads,
            quiet,
            max_memory,
        } => {
            if !(step.is_finite() && (0.1..=15.0).contains(&step)) {
                return Err(Failure::Input(format!(
                    "--step {step}: give an angle between 0.1 and 15 degrees"
                )));
            }
            let s = load(&file, &m)?;
            let name = file.display().to_string();
            if !lathe::radiation::is_open(&s) {
                return Err(Failure::Input(format!(
                    "{name}: the structure is closed (no PML wall): it does not radiate; use `lathe modes`"
                )));
            }
            problem_of(&s, &name)?;
            if let Some(dir) = &out {
                writable("--out", &dir.join("x")).or_else(|_| {
                    std::fs::create_dir_all(dir).map_err(|e| {
                        Failure::Input(format!(
                            "--out {}: cannot create the folder: {e}",
                            dir.display()
                        ))
                    })
                })?;
            }
            let pool = pool(threads)?;
            let options = StudyOptions {
                max_memory: max_memory.unwrap_or(DEFAULT_MAX_MEMORY),
            };
            let study = solve_study(&s, &name, &pool, &options, quiet)?;
            let rad = radiation_of(&study, &s, &pool, step)?
                .ok_or_else(|| Failure::Input(format!("{name}: the structure does not radiate")))?;
            pool.install(|| {
                pattern(
                    &s,
                    &name,
                    &study,
                    &rad,
                    mode.as_deref(),
                    out.as_deref(),
                    step,
                )
            })
        }
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
                if !quiet {
                    r.studies.iter().for_each(warn_first_order);
                }
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
            let study = solve_study(&s, &name, &pool, &options, quiet)?;
            // Radiation figures are an addition to the modes: when they
            // cannot be computed (e.g. a body reaches the radiation surface)
            // the modes are still reported, with the reason.
            let rad = match radiation_of(&study, &s, &pool, 1.0) {
                Ok(r) => r,
                Err(Failure::Run(why) | Failure::Input(why)) => {
                    eprintln!("warning: no radiation figures: {why}");
                    None
                }
            };
            emit(&output::table(&study));
            if let Some(r) = &rad {
                emit("\nradiation (lathe pattern for cuts and maps)\n");
                emit(&lathe::radiation::table(r));
            }
            if compare_formulas {
                emit(&lathe::formulas::comparison_text(&s, &study));
            }
            if let Some(path) = &outputs.json {
                let mut doc = output::json(&study);
                if let Some(r) = &rad {
                    lathe::radiation::add_to_json(&mut doc, r);
                }
                let doc = serde_json::to_string_pretty(&doc).expect("JSON of plain numbers");
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
            Ok(())
        }
    }
}
