//! Wall-clock times of the stages of `fieldgrid solve` (`--timings`).
//!
//! The library reads no clock: it tells a [`StageMonitor`] when each stage of a study starts
//! and ends, and this module reads the clock at those calls and around the command's own steps
//! (reading the design, the result files, the pictures). Times are wall seconds, with the CPU
//! seconds of the whole process (every thread) beside them where the system reports them
//! (Linux: /proc/self/stat, in ticks of 10 ms), in the order the stages ran. On a busy machine
//! the wall time of a stage grows while its CPU seconds do not.

use fieldgrid_solver::stages::{Event, Stage, StageMonitor};
use std::sync::{Arc, Mutex};
use std::time::Instant;

/// Stage times of one command run.
#[derive(Debug)]
pub struct Timings {
    start: Instant,
    start_cpu: Option<f64>,
    log: Mutex<Log>,
}

/// One stage's times.
#[derive(Clone, Debug, PartialEq)]
pub struct StageTime {
    /// The stage: a library [`Stage::key`] or one of the command's own.
    pub name: String,
    /// Wall seconds.
    pub seconds: f64,
    /// CPU seconds of the process during the stage, when known.
    pub cpu: Option<f64>,
}

#[derive(Debug, Default)]
struct Log {
    open: Option<(Stage, Instant, Option<f64>)>,
    done: Vec<StageTime>,
}

/// CPU seconds the process has used so far (every thread), from /proc/self/stat; `None`
/// where that does not exist.
pub fn cpu_seconds() -> Option<f64> {
    let stat = std::fs::read_to_string("/proc/self/stat").ok()?;
    // utime and stime are fields 14 and 15, counted from 1, the second name-free field being
    // the state (field 3); in ticks of 1/100 s (the Linux default).
    let rest = stat.rsplit_once(')')?.1;
    let f: Vec<&str> = rest.split_whitespace().collect();
    let tick = |k: usize| f.get(k)?.parse::<f64>().ok();
    Some((tick(11)? + tick(12)?) / 100.0)
}

/// The process's peak resident set, MiB (VmHWM of /proc/self/status: this program's own
/// memory, not what a parent held before it started), and its minor page faults so far
/// (field 10 of /proc/self/stat); `None` where those do not exist.
pub fn memory() -> Option<(f64, u64)> {
    let status = std::fs::read_to_string("/proc/self/status").ok()?;
    let kib: f64 = status
        .lines()
        .find_map(|l| l.strip_prefix("VmHWM:"))?
        .trim()
        .trim_end_matches("kB")
        .trim()
        .parse()
        .ok()?;
    let stat = std::fs::read_to_string("/proc/self/stat").ok()?;
    let faults = stat
        .rsplit_once(')')?
        .1
        .split_whitespace()
        .nth(7)?
        .parse()
        .ok()?;
    Some((kib / 1024.0, faults))
}

fn since(t0: Option<f64>, t1: Option<f64>) -> Option<f64> {
    Some(t1? - t0?)
}

/// The study's stages that make up "setup + solves", the cost of the linear algebra alone.
pub const SOLVER_STAGES: [&str; 2] = ["solver_setup", "solves"];

impl Timings {
    /// Starts the clock.
    pub fn new() -> Arc<Timings> {
        Arc::new(Timings {
            start: Instant::now(),
            start_cpu: cpu_seconds(),
            log: Mutex::default(),
        })
    }

    /// A monitor for [`fieldgrid_solver::study::StudyParams::stages`] that records here.
    pub fn monitor(self: &Arc<Self>) -> StageMonitor {
        let me = Arc::clone(self);
        StageMonitor(Arc::new(move |stage, event| {
            let (now, cpu) = (Instant::now(), cpu_seconds());
            let mut log = me.log.lock().expect("timings lock");
            match event {
                Event::Start => log.open = Some((stage, now, cpu)),
                Event::End => {
                    if let Some((s, t, c)) = log.open.take() {
                        debug_assert_eq!(s, stage, "stages do not nest");
                        log.done.push(StageTime {
                            name: s.key().to_string(),
                            seconds: (now - t).as_secs_f64(),
                            cpu: since(c, cpu),
                        });
                    }
                }
            }
        }))
    }

    /// Runs `f` as the command's own stage `name`.
    pub fn time<T>(&self, name: &str, f: impl FnOnce() -> T) -> T {
        let (t, c) = (Instant::now(), cpu_seconds());
        let out = f();
        let seconds = t.elapsed().as_secs_f64();
        self.log.lock().expect("timings lock").done.push(StageTime {
            name: name.to_string(),
            seconds,
            cpu: since(c, cpu_seconds()),
        });
        out
    }

    /// The stages in the order they ran.
    pub fn stages(&self) -> Vec<StageTime> {
        self.log.lock().expect("timings lock").done.clone()
    }

    /// Wall and CPU seconds since [`Timings::new`].
    pub fn total(&self) -> StageTime {
        StageTime {
            name: "total".to_string(),
            seconds: self.start.elapsed().as_secs_f64(),
            cpu: since(self.start_cpu, cpu_seconds()),
        }
    }

    /// The table `--timings` prints: one line per stage, the rest of the run, the total, the
    /// total over the solver's setup and solves, and the peak memory and page faults.
    pub fn table(&self) -> String {
        use std::fmt::Write;
        let stages = self.stages();
        let total = self.total();
        let sum = |pick: &dyn Fn(&StageTime) -> bool| StageTime {
            name: String::new(),
            seconds: stages.iter().filter(|s| pick(s)).map(|s| s.seconds).sum(),
            cpu: stages
                .iter()
                .filter(|s| pick(s))
                .try_fold(0.0, |a, s| Some(a + s.cpu?)),
        };
        let listed = sum(&|_| true);
        let solver = sum(&|s| SOLVER_STAGES.contains(&s.name.as_str()));
        let other = StageTime {
            name: "other".to_string(),
            seconds: (total.seconds - listed.seconds).max(0.0),
            cpu: since(listed.cpu, total.cpu).map(|c| c.max(0.0)),
        };
        let mut out = String::from("timings (seconds):         wall      cpu\n");
        for s in stages.iter().chain([&other, &total]) {
            let cpu = s.cpu.map(|c| format!("{c:9.2}")).unwrap_or_default();
            let _ = writeln!(out, "  {:<22} {:9.3}{cpu}", s.name, s.seconds);
        }
        if solver.seconds > 0.0 {
            let _ = writeln!(
                out,
                "  total / (solver_setup + solves): wall {:.2}{}",
                total.seconds / solver.seconds,
                match (total.cpu, solver.cpu) {
                    (Some(t), Some(s)) if s > 0.0 => format!(", cpu {:.2}", t / s),
                    _ => String::new(),
                }
            );
        }
        if let Some((mib, faults)) = memory() {
            let _ = writeln!(
                out,
                "  peak resident {mib:.0} MiB, {faults} minor page faults"
            );
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn library_and_command_stages_are_listed_in_order() {
        let t = Timings::new();
        let m = t.monitor();
        (m.0)(Stage::SolverSetup, Event::Start);
        (m.0)(Stage::SolverSetup, Event::End);
        t.time("pictures", || ());
        let names: Vec<String> = t.stages().into_iter().map(|s| s.name).collect();
        assert_eq!(names, ["solver_setup", "pictures"]);
        let table = t.table();
        assert!(table.starts_with("timings (seconds):"));
        assert!(table.contains("\n  solver_setup "));
        assert!(table.contains("\n  pictures "));
        assert!(table.contains("\n  total "));
        #[cfg(target_os = "linux")]
        {
            let (mib, faults) = memory().expect("Linux reports memory");
            assert!(mib > 0.0 && faults > 0, "{mib} MiB, {faults} faults");
            assert!(table.contains("\n  peak resident "));
        }
    }
}
