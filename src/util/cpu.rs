//! CPU time of the calling thread and of the whole process (POSIX clocks), for timings
//! that should not count time lost to other processes on a shared machine. On platforms
//! without POSIX clocks the times are unknown (`None`) and timings show wall time only.

use std::time::Duration;

#[cfg(unix)]
mod clocks {
    use std::time::Duration;

    fn clock(id: libc::clockid_t) -> Option<Duration> {
        let mut ts = libc::timespec {
            tv_sec: 0,
            tv_nsec: 0,
        };
        // SAFETY: `ts` is a valid, writable timespec; the call only writes into it.
        #[allow(unsafe_code)]
        let rc = unsafe { libc::clock_gettime(id, &mut ts) };
        if rc != 0 {
            return None;
        }
        Some(Duration::new(
            u64::try_from(ts.tv_sec).ok()?,
            u32::try_from(ts.tv_nsec).ok()?,
        ))
    }

    pub fn thread() -> Option<Duration> {
        clock(libc::CLOCK_THREAD_CPUTIME_ID)
    }

    pub fn process() -> Option<Duration> {
        clock(libc::CLOCK_PROCESS_CPUTIME_ID)
    }
}

#[cfg(not(unix))]
mod clocks {
    use std::time::Duration;

    pub fn thread() -> Option<Duration> {
        None
    }

    pub fn process() -> Option<Duration> {
        None
    }
}

/// CPU time used so far by the calling thread (`None` where the platform has no clock).
pub fn thread_cpu_time() -> Option<Duration> {
    clocks::thread()
}

/// CPU time used so far by the whole process, all threads (`None` where the platform has
/// no clock).
pub fn process_cpu_time() -> Option<Duration> {
    clocks::process()
}

/// CPU time of the calling thread spent in `f`, with `f`'s result.
pub fn thread_cpu<T>(f: impl FnOnce() -> T) -> (T, Duration) {
    let start = thread_cpu_time();
    let out = f();
    let spent = thread_cpu_time()
        .zip(start)
        .map_or(Duration::ZERO, |(b, a)| b.saturating_sub(a));
    (out, spent)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    #[cfg(unix)]
    fn busy_work_takes_cpu_time_and_sleep_does_not() {
        let (_, busy) = thread_cpu(|| {
            let mut x = 0u64;
            for i in 0..20_000_000u64 {
                x = x.wrapping_mul(31).wrapping_add(std::hint::black_box(i));
            }
            x
        });
        assert!(busy > Duration::from_millis(1), "{busy:?}");
        let (_, slept) = thread_cpu(|| std::thread::sleep(Duration::from_millis(50)));
        assert!(slept < Duration::from_millis(25), "{slept:?}");
        let p = process_cpu_time().unwrap();
        assert!(p >= busy, "{p:?} {busy:?}");
    }
}
