//! What the loopback tools (`loadgen`, `soak`) share: starting the `ringdrag` binary on a free
//! 127.0.0.1 port and reading its resident memory.
//!
//! Included by each tool with `#[path = "support/loopback.rs"] mod loopback;` (a file directly
//! in `examples/` would be taken for an example of its own).

use std::path::{Path, PathBuf};
use std::process::Stdio;
use std::time::Duration;
use tokio::io::{AsyncBufReadExt, BufReader};

/// The line the server prints once bound, before its URL.
const LISTENING: &str = "ringdrag listening on ";

/// A server started by [`start_server`] (killed when dropped).
pub(crate) struct LoopbackServer {
    /// The server process, held so that it is killed with this value.
    _child: tokio::process::Child,
    /// `http://127.0.0.1:PORT`.
    pub(crate) url: String,
    /// Its process id.
    pub(crate) pid: u32,
}

/// The release `ringdrag` binary next to the running example (`target/release/ringdrag` for
/// `target/release/examples/NAME`).
pub(crate) fn default_server() -> Option<PathBuf> {
    let me = std::env::current_exe().ok()?;
    Some(me.parent()?.parent()?.join("ringdrag"))
}

/// Starts the binary at `path` with `args` on a free 127.0.0.1 port (under an open-file limit
/// of `file_limit`, soft and hard, when given, as a host with a low limit would run it), and
/// waits at most 30 s for its `listening` line.
///
/// # Errors
/// When it cannot start, prints no address, or listens elsewhere than on 127.0.0.1.
pub(crate) async fn start_server(
    path: &Path,
    args: &[String],
    file_limit: Option<u64>,
) -> Result<LoopbackServer, String> {
    let mut cmd = match file_limit {
        Some(files) => {
            let mut sh = tokio::process::Command::new("sh");
            sh.arg("-c")
                .arg(format!("ulimit -n {files} && exec \"$0\" \"$@\""))
                .arg(path);
            sh
        }
        None => tokio::process::Command::new(path),
    };
    cmd.args(["--listen", "127.0.0.1:0"])
        .args(args)
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::null())
        .kill_on_drop(true);
    let mut child = cmd
        .spawn()
        .map_err(|e| format!("cannot start {}: {e}", path.display()))?;
    let stdout = child.stdout.take().ok_or("no stdout")?;
    let mut lines = BufReader::new(stdout).lines();
    let url = tokio::time::timeout(Duration::from_secs(30), async {
        while let Ok(Some(line)) = lines.next_line().await {
            if let Some(url) = line.strip_prefix(LISTENING) {
                return Some(url.trim().to_string());
            }
        }
        None
    })
    .await
    .ok()
    .flatten()
    .ok_or("the server did not print its address")?;
    // Keep reading its standard output so that it never blocks on a full pipe.
    tokio::spawn(async move { while let Ok(Some(_)) = lines.next_line().await {} });
    if !url.starts_with("http://127.0.0.1:") {
        return Err(format!("{url} is not on 127.0.0.1"));
    }
    let pid = child.id().ok_or("the server exited at once")?;
    Ok(LoopbackServer {
        _child: child,
        url,
        pid,
    })
}

/// Resident memory of process `pid`, KiB: (now, peak), from `VmRSS` and `VmHWM` in
/// `/proc/PID/status`; `None` where that file does not exist (not Linux) or lacks them.
pub(crate) fn memory_kib(pid: u32) -> Option<(u64, u64)> {
    let status = std::fs::read_to_string(format!("/proc/{pid}/status")).ok()?;
    let field = |name: &str| {
        status
            .lines()
            .find(|l| l.starts_with(name))
            .and_then(|l| l.split_whitespace().nth(1))
            .and_then(|v| v.parse::<u64>().ok())
    };
    Some((field("VmRSS:")?, field("VmHWM:")?))
}
