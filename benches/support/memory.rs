//! Peak resident memory of the running process (Linux /proc), for the
//! benchmarks.

#![allow(dead_code)]

/// The peak resident memory so far, MB (`VmHWM` of /proc/self/status).
pub fn peak_resident_mb() -> Option<f64> {
    let status = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = status.lines().find(|l| l.starts_with("VmHWM:"))?;
    let kb: f64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kb / 1024.0)
}

/// Reset the peak resident memory to the current one (writing 5 to
/// /proc/self/clear_refs, Linux 4.0 and later).
pub fn reset_peak() {
    let _ = std::fs::write("/proc/self/clear_refs", "5");
}
