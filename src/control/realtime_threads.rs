//! How many of the service's threads run under a real-time scheduling policy: the plain answer
//! to "was real-time priority granted?", read from what the kernel says of each thread
//! (`/proc/self/task/*/stat`, proc(5)), whoever asked for it.

/// Field 41 of a thread's `stat` line is its scheduling policy (proc(5)); counted from the
/// field after the command name, which may itself hold spaces and parentheses.
const POLICY_AFTER_NAME: usize = 41 - 3;

/// SCHED_FIFO, SCHED_RR and SCHED_DEADLINE (sched(7)).
fn is_realtime(policy: u32) -> bool {
    matches!(policy, 1 | 2 | 6)
}

/// The policy in one `stat` line.
fn policy_of(stat: &str) -> Option<u32> {
    let (_, after_name) = stat.rsplit_once(')')?;
    after_name
        .split_whitespace()
        .nth(POLICY_AFTER_NAME)?
        .parse()
        .ok()
}

/// Threads of this process under a real-time policy; `None` where /proc cannot be read.
pub fn realtime_thread_count() -> Option<u64> {
    let tasks = std::fs::read_dir("/proc/self/task").ok()?;
    let mut count = 0;
    for task in tasks.flatten() {
        let Ok(stat) = std::fs::read_to_string(task.path().join("stat")) else {
            continue; // the thread ended while we looked
        };
        if policy_of(&stat).is_some_and(is_realtime) {
            count += 1;
        }
    }
    Some(count)
}

#[cfg(test)]
mod tests {
    use super::*;

    // Source: proc(5) — the stat line's fields; sched(7) — policy numbers.
    #[test]
    fn the_policy_is_read_past_a_name_with_spaces_and_parentheses() {
        let mut fields: Vec<String> = (3..=52).map(|i| i.to_string()).collect();
        fields[POLICY_AFTER_NAME] = "1".into();
        let line = format!("4242 (odd (name) x) {}", fields.join(" "));
        assert_eq!(policy_of(&line), Some(1));
        assert!(is_realtime(1) && is_realtime(2) && !is_realtime(0) && !is_realtime(3));
    }

    #[test]
    fn this_test_process_is_read() {
        // The test threads run under the ordinary policy unless someone raised them.
        assert!(realtime_thread_count().is_some());
    }
}
