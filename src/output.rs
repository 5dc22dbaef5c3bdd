//! Result output: the mode table and the JSON document of `lathe modes`.
//!
//! Units at this edge: GHz and mm in the table, SI (Hz, s, m) in the JSON
//! except for the cell sizes, which carry their unit in the key
//! (`cell_r_mm`).
use crate::study::Study;
use lathe_solver::{Mode, ZWall};
use serde_json::{json, Value};

/// Q as printed: a number, with "≥" when it is a lower bound.
pub fn q_text(m: &Mode) -> String {
    if m.q_is_lower_bound {
        format!("≥ {:.3e}", m.q)
    } else if m.q >= 1e5 {
        format!("{:.3e}", m.q)
    } else {
        format!("{:.2}", m.q)
    }
}

/// A Q figure for the loss columns: finite numbers as in [`q_text`],
/// "none" for an infinite one (no lossy body holds the mode's energy).
fn q_number(q: f64) -> String {
    if !q.is_finite() {
        "none".into()
    } else if q >= 1e5 {
        format!("{q:.3e}")
    } else {
        format!("{q:.1}")
    }
}

fn plane_name(p: Option<ZWall>) -> &'static str {
    match p {
        Some(ZWall::Pec) => "pec",
        Some(ZWall::Pmc) => "pmc",
        _ => "",
    }
}

/// The mode table as text. When the structure was solved as two halves the
/// `plane` column says which family each mode belongs to (`pec`: E
/// tangential zero on the mid-plane; `pmc`: H tangential zero).
pub fn table(study: &Study) -> String {
    let halves = study.runs.iter().any(|r| r.plane.is_some());
    let losses = study.losses();
    let mut s = String::new();
    s.push_str("  m  mode            f (GHz)            Q      error   amplitude");
    if losses.is_some() {
        s.push_str("  Q with loss   Q_d");
    }
    s.push_str(if halves { "  plane\n" } else { "\n" });
    for (k, (m, plane)) in study.modes().into_iter().enumerate() {
        s.push_str(&format!(
            "{:>3}  {:<12}  {:>11.6}  {:>11}  {:>9.1e}  {:>10.3}",
            m.m,
            m.label,
            m.freq_hz / 1e9,
            q_text(&m),
            m.error,
            m.amplitude
        ));
        if let Some(l) = &losses {
            match &l[k] {
                Some(l) => s.push_str(&format!(
                    "  {:>11}  {:>5}",
                    q_number(l.q_with_loss),
                    q_number(l.q_dielectric)
                )),
                None => s.push_str("            —      —"),
            }
        }
        if halves {
            s.push_str(&format!("  {}", plane_name(plane)));
        }
        s.push('\n');
    }
    s
}

/// The mode table as CSV (RFC 4180, comma-separated, one header line), in
/// the order of [`table`]: `index,m,label,freq_ghz,q,q_is_lower_bound,
/// error,amplitude,plane`. Frequencies in GHz with 9 significant digits,
/// Q with 6; `plane` is empty for a whole-region run.
pub fn csv(study: &Study) -> String {
    let mut s = String::from("index,m,label,freq_ghz,q,q_is_lower_bound,error,amplitude,plane\n");
    for (k, (m, plane)) in study.modes().iter().enumerate() {
        s.push_str(&format!(
            "{},{},{},{:.9e},{:.6e},{},{:.3e},{:.6e},{}\n",
            k,
            m.m,
            csv_field(&m.label),
            m.freq_hz / 1e9,
            m.q,
            m.q_is_lower_bound,
            m.error,
            m.amplitude,
            plane_name(*plane)
        ));
    }
    s
}

/// A CSV field, quoted when it holds a comma, quote or line break.
fn csv_field(text: &str) -> String {
    if text.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", text.replace('"', "\"\""))
    } else {
        text.to_string()
    }
}

/// The JSON document: `{"modes": [...], "runs": [...]}`.
pub fn json(study: &Study) -> Value {
    let losses = study.losses();
    let modes: Vec<Value> = study
        .modes()
        .iter()
        .enumerate()
        .map(|(k, (m, plane))| {
            let mut v = json!({
                "m": m.m,
                "label": m.label,
                "freq_hz": m.freq_hz,
                "q": m.q,
                "q_is_lower_bound": m.q_is_lower_bound,
                "decay_per_s": m.decay,
                "error": m.error,
                "amplitude": m.amplitude,
                "probes": m.probes,
                "plane": plane.map(|_| plane_name(*plane)),
            });
            if let Some(Some(l)) = losses.as_ref().map(|l| &l[k]) {
                v["electric_filling"] = json!(l.filling);
                v["q_with_loss"] = json!(l.q_with_loss);
                if l.q_dielectric.is_finite() {
                    v["q_dielectric"] = json!(l.q_dielectric);
                }
            }
            v
        })
        .collect();
    let runs: Vec<Value> = study
        .runs
        .iter()
        .map(|r| {
            let p = &r.output.report;
            json!({
                "m": p.m,
                "plane": r.plane.map(|_| plane_name(r.plane)),
                "nr": p.nr,
                "nz": p.nz,
                "cell_r_mm": p.dr * 1e3,
                "cell_z_mm": p.dz * 1e3,
                "dt_s": p.dt,
                "dt_limit_s": p.dt_max,
                "axis_rod_mm": p.axis_rod as f64 * p.dr * 1e3,
                "steps": p.steps,
                "cell_updates": p.cell_updates,
                "seconds": p.seconds,
                "samples": p.samples,
                "sample_dt_s": p.sample_dt,
                "checks": p.checks,
                "converged": p.converged,
                "surface_correction": surface_correction_name(p.surface_correction),
            })
        })
        .collect();
    json!({ "modes": modes, "runs": runs })
}

/// The JSON word for a run's curved-surface correction: `"none"` (no
/// curved interface), `"applied"`, or `"left out"`.
fn surface_correction_name(
    c: Option<lathe_solver::coefficients::SurfaceCorrection>,
) -> &'static str {
    match c {
        None => "none",
        Some(c) if c.applied() => "applied",
        Some(_) => "left out",
    }
}

/// The plan of every run of `scenario`, as text (what `lathe check`
/// prints): per run the grid, absorber, walls, band, time step and its
/// margin, pulse, sampling, length, sources and probes, memory; then the
/// totals — cell updates at most, memory of the runs under way at once
/// against the cap, and (when `measure` is set) a run-time estimate from
/// this machine's stepping rate, timed for a fraction of a second on the
/// largest run's own coefficients (scratch fields; nothing is solved).
pub fn plan_text(
    scenario: &crate::scenario::Scenario,
    options: &crate::study::StudyOptions,
    measure: bool,
) -> Result<String, crate::study::StudyError> {
    use crate::study::{concurrent_runs, problems, stepping_runs, StudyError};
    use std::fmt::Write;
    let mut s = String::new();
    crate::study::check_size(scenario, options)?;
    let mut probs = problems(scenario).map_err(StudyError::Input)?;
    // Plan without the per-run cap so an oversized run is shown (and
    // flagged below) rather than refused.
    for (_, _, p) in probs.iter_mut() {
        p.options.max_memory = usize::MAX;
    }
    if probs.len() == 2 {
        s.push_str("symmetry    the structure is symmetric about z = ");
        s.push_str(&format!(
            "{:.4} mm: solved as its upper half over a PEC and over a PMC plane\n",
            probs[0].1.z_min * 1e3
        ));
    }
    let concurrent = concurrent_runs(scenario);
    let share = options.max_memory / concurrent;
    let mut plans = Vec::new();
    for (plane, sc, problem) in &probs {
        if let Some(p) = plane {
            s.push_str(&format!("half        mid-plane {}\n", plane_name(Some(*p))));
        }
        let (text, ps) = plan_one(sc, problem).map_err(StudyError::Run)?;
        s.push_str(&text);
        for p in ps {
            plans.push((problem, p));
        }
    }
    let total: u64 = plans
        .iter()
        .map(|(pr, p)| lathe_solver::run::planned_cell_updates(pr, p))
        .sum();
    // The stopping rule can be met at the second check at the earliest.
    let early: u64 = plans
        .iter()
        .map(|(pr, p)| {
            let checks = p.checks();
            let samples = checks.get(1).or(checks.first()).copied().unwrap_or(0);
            (p.source_steps + samples * p.decimation) as u64 * pr.materials.grid.cells() as u64
        })
        .sum();
    let mut mem: Vec<usize> = plans.iter().map(|(_, p)| p.memory_bytes).collect();
    mem.sort_unstable_by(|a, b| b.cmp(a));
    let at_once: usize = mem.iter().take(concurrent).sum();
    let mib = |b: usize| b as f64 / 1048576.0;
    let _ = writeln!(
        s,
        "total       {} run(s), {:.3e} cell updates if the modes settle at the second check, at most {:.3e}",
        plans.len(),
        early as f64,
        total as f64
    );
    let _ = writeln!(
        s,
        "memory      at most {:.1} MiB for {} run(s) under way at once; cap {:.0} MiB ({:.0} MiB per run; --max-memory)",
        mib(at_once),
        concurrent,
        mib(options.max_memory),
        mib(share)
    );
    for (pr, p) in &plans {
        if p.memory_bytes > share {
            let _ = writeln!(
                s,
                "warning     run m = {} needs about {:.0} MiB, above its share of the cap: `lathe modes` will refuse it",
                p.m,
                mib(p.memory_bytes)
            );
        }
        let _ = pr;
    }
    if measure {
        if let Some((pr, p)) = plans.iter().max_by_key(|(pr, _)| pr.materials.grid.cells()) {
            let g = &pr.materials.grid;
            // Several runs at once step one per thread (a thread that runs
            // out of runs helps the others only at the end): time one
            // thread and count one per run stepping at once. A single run
            // splits its rows over the pool: time the pool.
            let stepping = stepping_runs(scenario);
            let (rate, threads, runs_in_parallel) = if stepping > 1 {
                let one = rayon::ThreadPoolBuilder::new().num_threads(1).build();
                let rate = match one {
                    Ok(pool) => {
                        pool.install(|| lathe_solver::bench::step_rate(pr, p.m, p.dt, 0.25))
                    }
                    Err(_) => lathe_solver::bench::step_rate(pr, p.m, p.dt, 0.25),
                };
                (rate, 1, stepping)
            } else {
                let rate = lathe_solver::bench::step_rate(pr, p.m, p.dt, 0.25);
                (rate, rayon::current_num_threads(), 1)
            };
            let seconds = |n: u64| n as f64 / (rate * runs_in_parallel as f64);
            let _ = writeln!(
                s,
                "machine     {:.3e} cell updates/s per run on the {} × {} grid ({} thread(s) per run, {} run(s) at once; timed just now)",
                rate,
                g.nr,
                g.nz,
                threads,
                runs_in_parallel
            );
            let _ = writeln!(
                s,
                "run time    about {} if the modes settle at the second check, at most about {} (planned maximum lengths)",
                duration_text(seconds(early)),
                duration_text(seconds(total))
            );
        }
    }
    Ok(s)
}

/// A duration for people: "0.8 s", "42 s", "3.5 min", "1.2 h".
pub fn duration_text(seconds: f64) -> String {
    if seconds < 10.0 {
        format!("{seconds:.1} s")
    } else if seconds < 120.0 {
        format!("{seconds:.0} s")
    } else if seconds < 7200.0 {
        format!("{:.1} min", seconds / 60.0)
    } else {
        format!("{:.1} h", seconds / 3600.0)
    }
}

fn plan_one(
    scenario: &crate::scenario::Scenario,
    problem: &lathe_solver::Problem,
) -> Result<(String, Vec<lathe_solver::RunPlan>), lathe_solver::SolverError> {
    use std::fmt::Write;
    let g = &problem.materials.grid;
    let mut s = String::new();
    let _ = writeln!(
        s,
        "grid        {} × {} cells (r × z), cell {:.4} × {:.4} mm, region r ≤ {:.3} mm, {:.3} ≤ z ≤ {:.3} mm",
        g.nr,
        g.nz,
        g.dr * 1e3,
        g.dz * 1e3,
        g.radius() * 1e3,
        g.z0 * 1e3,
        g.z_top() * 1e3
    );
    let (ao, ab, at) = scenario.absorber_cells();
    if ao + ab + at > 0 {
        let _ = writeln!(
            s,
            "absorber    PML cells outer {ao}, bottom {ab}, top {at} (added beyond the region; grid above includes them)"
        );
    }
    let w = &problem.walls;
    let _ = writeln!(
        s,
        "walls       outer {}, bottom {}, top {}",
        w.outer.name(),
        w.bottom.name(),
        w.top.name()
    );
    let _ = writeln!(
        s,
        "band        {:.4} – {:.4} GHz, densest ε_r {:.3}",
        problem.f_min / 1e9,
        problem.f_max / 1e9,
        problem.materials.max_eps_r()
    );
    for warning in scenario.warnings(g) {
        let _ = writeln!(s, "warning     {warning}");
    }
    let mut plans = Vec::new();
    for &m in &scenario.m {
        let p = lathe_solver::plan(problem, m)?;
        let _ = writeln!(s, "run m = {m}");
        let _ = writeln!(
            s,
            "  time step   {:.4e} s = {:.3} × limit {:.4e} s (Lanczos, {} iterations; 2D vacuum Courant limit {:.4e} s)",
            p.dt,
            p.dt / p.stability.dt_max,
            p.stability.dt_max,
            p.stability.iterations,
            p.stability.dt_cartesian
        );
        if p.axis_rod > 0 {
            let _ = writeln!(
                s,
                "  axis        E held at zero for r ≤ {:.4} mm ({} cell(s)): order {m} fields vanish there as {}",
                p.axis_rod as f64 * g.dr * 1e3,
                p.axis_rod,
                if m == 2 { "r".to_string() } else { format!("r^{}", m - 1) }
            );
        }
        let _ = writeln!(
            s,
            "  pulse       centre {:.4} GHz, σ_f {:.4} GHz, {} steps",
            p.pulse.f_center / 1e9,
            p.pulse.sigma_f / 1e9,
            p.source_steps
        );
        let _ = writeln!(
            s,
            "  sampling    every {} steps ({:.4e} s), first check after {} samples, at most {} samples",
            p.decimation, p.sample_dt, p.first_check, p.max_samples
        );
        let _ = writeln!(
            s,
            "  length      at most {} steps = {:.3e} cell updates",
            p.max_steps,
            p.max_steps as f64 * g.cells() as f64
        );
        for (kind, pts) in [("source", &p.sources), ("probe", &p.probes)] {
            for pt in pts.iter() {
                let comps: Vec<&str> = pt.taps.iter().map(|t| t.component.name()).collect();
                let _ = writeln!(
                    s,
                    "  {kind:<7}     r = {:.3} mm, z = {:.3} mm ({})",
                    pt.r * 1e3,
                    pt.z * 1e3,
                    comps.join(" ")
                );
            }
        }
        let _ = writeln!(
            s,
            "  memory      {:.1} MiB: fields, coefficients, absorber and probes {:.1} MiB, early ring-down {:.1} MiB ({} samples), mode fields up to {} × {:.1} MiB",
            p.memory_bytes as f64 / 1048576.0,
            p.base_bytes as f64 / 1048576.0,
            p.early_bytes as f64 / 1048576.0,
            p.early_samples,
            p.max_mode_fields,
            p.mode_field_bytes as f64 / 1048576.0
        );
        plans.push(p);
    }
    Ok((s, plans))
}

/// The refined mode table (`--refine`).
pub fn refined_table(r: &crate::refine::Refined) -> String {
    let halves = r.modes.iter().any(|m| m.plane.is_some());
    let mut s =
        String::from("  m  mode              f (GHz)   ± (GHz)             Q         ±   order(f)");
    s.push_str(if halves { "  plane\n" } else { "\n" });
    for m in &r.modes {
        let q = if m.finest.q_is_lower_bound {
            format!("≥ {:.3e}", m.q)
        } else {
            format!("{:.3}", m.q)
        };
        s.push_str(&format!(
            "{:>3}  {:<12}  {:>11.6}  {:>8.1e}  {:>12}  {:>8.2}  {:>9}",
            m.finest.m,
            m.finest.label,
            m.freq_hz / 1e9,
            m.freq_err_hz / 1e9,
            q,
            m.q_err,
            m.order_f.map_or("—".to_string(), |p| format!(
                "{p:.2}{}",
                if m.asymptotic_f { " " } else { "*" }
            ))
        ));
        if halves {
            s.push_str(&format!("  {}", plane_name(m.plane)));
        }
        s.push('\n');
    }
    let lo = crate::refine::ASYMPTOTIC_ORDERS.start();
    let hi = crate::refine::ASYMPTOTIC_ORDERS.end();
    if r.modes
        .iter()
        .any(|m| m.order_f.is_some() && !m.asymptotic_f)
    {
        s.push_str(&format!(
            "  * observed order outside {lo}–{hi}: f extrapolated at order {} with safety factor 3\n",
            crate::refine::FORMAL_ORDER
        ));
    }
    s
}

/// The JSON document of a refined study: the modes carry the extrapolated
/// `freq_hz` and `q` with `freq_err_hz` and `q_err`, the three grids'
/// values (`freq_hz_grids`, `q_grids`, coarse first) and whether each
/// observed order was in the asymptotic range (`asymptotic_f`,
/// `asymptotic_q`; see `lathe::refine`); `runs` lists the runs
/// of all three grids (`grid` 0 = coarsest).
pub fn refined_json(r: &crate::refine::Refined) -> Value {
    let modes: Vec<Value> = r
        .modes
        .iter()
        .map(|m| {
            json!({
                "m": m.finest.m,
                "label": m.finest.label,
                "freq_hz": m.freq_hz,
                "freq_err_hz": m.freq_err_hz,
                "q": m.q,
                "q_err": m.q_err,
                "q_is_lower_bound": m.finest.q_is_lower_bound,
                "order_f": m.order_f,
                "asymptotic_f": m.asymptotic_f,
                "asymptotic_q": m.asymptotic_q,
                "freq_hz_grids": m.freq_hz_grids,
                "q_grids": m.q_grids,
                "freq_hz_finest": m.finest.freq_hz,
                "q_finest": m.finest.q,
                "error": m.finest.error,
                "plane": m.plane.map(|_| plane_name(m.plane)),
            })
        })
        .collect();
    let mut runs = Vec::new();
    for (k, st) in r.studies.iter().enumerate() {
        if let Value::Object(doc) = json(st) {
            if let Some(Value::Array(rs)) = doc.get("runs") {
                for run in rs {
                    let mut run = run.clone();
                    run["grid"] = json!(k);
                    runs.push(run);
                }
            }
        }
    }
    json!({ "modes": modes, "runs": runs })
}
