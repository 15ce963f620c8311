//! Machine facts and CPU load for the benches (`solver`, `bem`): the CPU
//! model, the thread counts, and busy/total ticks from `/proc` so that a
//! bench can say how much of the machine other processes used while it ran.
//! Included by each bench with `#[path = "common/load.rs"] mod load;`.

/// The CPU model, logical CPUs and rayon threads, as one line.
pub fn machine() -> String {
    let cpu = std::fs::read_to_string("/proc/cpuinfo")
        .ok()
        .and_then(|s| {
            s.lines()
                .find(|l| l.starts_with("model name"))
                .and_then(|l| l.split_once(':'))
                .map(|(_, v)| v.trim().to_string())
        })
        .unwrap_or_else(|| "unknown CPU".into());
    let n = std::thread::available_parallelism().map_or(0, usize::from);
    format!(
        "machine: {cpu}, nproc = {n}, rayon threads = {}",
        rayon::current_num_threads()
    )
}

/// Busy and total CPU time of the machine so far, from `/proc/stat` [clock ticks].
pub fn machine_ticks() -> Option<(u64, u64)> {
    let stat = std::fs::read_to_string("/proc/stat").ok()?;
    let t: Vec<u64> = stat
        .lines()
        .next()?
        .split_whitespace()
        .skip(1)
        .take(8)
        .map(|x| x.parse().ok())
        .collect::<Option<_>>()?;
    // user nice system idle iowait irq softirq steal
    let idle = t.get(3)? + t.get(4)?;
    let total: u64 = t.iter().sum();
    Some((total - idle, total))
}

/// CPU time used by this process so far, from `/proc/self/stat` [clock ticks].
pub fn own_ticks() -> Option<u64> {
    let stat = std::fs::read_to_string("/proc/self/stat").ok()?;
    let (_, rest) = stat.rsplit_once(')')?;
    let f: Vec<&str> = rest.split_whitespace().collect();
    // Fields 14 and 15 of proc(5), utime and stime; `rest` starts at field 3.
    Some(f.get(11)?.parse::<u64>().ok()? + f.get(12)?.parse::<u64>().ok()?)
}

/// The machine's and this process's CPU ticks when a bench started.
pub struct Load(Option<((u64, u64), u64)>);

impl Load {
    /// Takes the ticks now.
    pub fn start() -> Load {
        Load(machine_ticks().zip(own_ticks()))
    }

    /// How much of the machine other processes used since [`Load::start`]
    /// (they slow the figures), as a line to print; `None` without `/proc`.
    pub fn report(&self) -> Option<String> {
        let ((b0, t0), o0) = self.0?;
        let ((b1, t1), o1) = (machine_ticks()?, own_ticks()?);
        let n = std::thread::available_parallelism().map_or(1, usize::from) as f64;
        let total = (t1 - t0).max(1) as f64;
        let others = (b1 - b0).saturating_sub(o1 - o0) as f64;
        Some(format!(
            "other processes used {:.2} of {n} cores on average during the run",
            n * others / total
        ))
    }
}
