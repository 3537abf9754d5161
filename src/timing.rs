//! `GAPCERT_TIMING=1`: each phase's wall time on stderr, with the process's CPU time
//! and page faults so far (for profiling the benchmark: reading, mathematics and
//! writing separately). Silent otherwise.

/// With `GAPCERT_TIMING` set, prints how long a phase took on stderr (for profiling
/// the benchmark: read, math and writing separately).
pub fn phase(phase: &str, started: std::time::Instant) {
    if std::env::var_os("GAPCERT_TIMING").is_some() {
        let (cpu, faults) = process_usage();
        eprintln!(
            "timing: {phase} {:.3} s (process so far: CPU {cpu:.3} s, {faults} page faults)",
            started.elapsed().as_secs_f64(),
        );
    }
}

/// User plus system CPU seconds and minor page faults of the whole process so far
/// (for `GAPCERT_TIMING`).
fn process_usage() -> (f64, i64) {
    // SAFETY: getrusage only writes the struct it is given.
    let usage = unsafe {
        let mut usage: libc::rusage = std::mem::zeroed();
        if libc::getrusage(libc::RUSAGE_SELF, &mut usage) != 0 {
            return (f64::NAN, -1);
        }
        usage
    };
    let seconds = |t: libc::timeval| t.tv_sec as f64 + t.tv_usec as f64 * 1e-6;
    (
        seconds(usage.ru_utime) + seconds(usage.ru_stime),
        usage.ru_minflt,
    )
}
