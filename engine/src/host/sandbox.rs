//! The plugin worker's sandbox: what a plugin library may do in its child process.
//!
//! A plugin's code runs with the rights of whoever runs popgauge. In a worker process
//! (`isolation = "process"`) the child restricts itself before it loads the library, so the
//! library's initialisers are restricted too:
//!
//! - **file system** (Linux Landlock): read the library copy, the genotype file and the system's
//!   shared libraries; write only the call's own scratch folder (its working folder and
//!   `TMPDIR`); nothing else, not the case folder and not the home folder;
//! - **network, processes, tracing** (Linux seccomp, and Landlock's TCP rules where the kernel
//!   has them): a socket of any family but local (Unix) ones, a new process, a new program and
//!   tracing another process stop the worker at once;
//! - **resources** (POSIX resource limits): memory (`memory_limit_mib`), CPU time (the time
//!   limit × the processor count) and no core files.
//!
//! What the kernel does not offer is reported back ([`SandboxState`]) and becomes a finding of
//! the step, so that a run on a kernel without Landlock says so rather than passing silently.

use std::path::PathBuf;

use serde::{Deserialize, Serialize};

/// The memory limit of a worker when the recipe gives none, in MiB.
pub const DEFAULT_MEMORY_LIMIT_MIB: u64 = 8192;

/// The finding code of a plugin step whose worker ran without (part of) the sandbox.
pub const NOT_SANDBOXED: &str = "worker-not-sandboxed";

/// Folders of the system's shared libraries, readable so that a library's own dependencies
/// load; they hold no user data.
const SYSTEM_LIBRARIES: &[&str] =
    &["/lib", "/lib32", "/lib64", "/usr/lib", "/usr/lib32", "/usr/lib64", "/usr/local/lib", "/etc/ld.so.cache"];

/// What a worker may touch, sent by the parent with each call.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct SandboxPlan {
    /// Files the plugin may read: the library copy and, for `run`, the genotype file.
    pub read: Vec<PathBuf>,
    /// The one folder it may write: the call's scratch folder.
    pub write: PathBuf,
    /// The limit of the worker's writable memory, in bytes.
    pub memory_bytes: u64,
    /// The limit of the worker's CPU time, in seconds (over all its threads).
    pub cpu_seconds: u64,
}

/// One restriction: in force, or why not.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
#[serde(tag = "state", content = "reason", rename_all = "kebab-case")]
pub enum Restriction {
    /// In force.
    Enforced,
    /// Not in force, with the reason (kernel or platform).
    Unavailable(String),
}

/// What the worker could enforce before it loaded the library.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct SandboxState {
    /// Landlock's file-system rules.
    pub file_system: Restriction,
    /// The seccomp filter: network sockets, new processes and programs, tracing.
    pub system_calls: Restriction,
    /// Memory, CPU time and core-file limits.
    pub limits: Restriction,
}

impl SandboxState {
    /// The restrictions not in force, in words, e.g. `file-system rules (Landlock is not
    /// enabled in this kernel)`; empty when the sandbox is whole.
    pub fn gaps(&self) -> Vec<String> {
        [
            ("file-system rules", &self.file_system),
            ("the system-call filter (network, new processes)", &self.system_calls),
            ("memory and CPU limits", &self.limits),
        ]
        .into_iter()
        .filter_map(|(what, state)| match state {
            Restriction::Enforced => None,
            Restriction::Unavailable(why) => Some(format!("{what} ({why})")),
        })
        .collect()
    }

    /// The step's finding when part of the sandbox was not in force.
    pub fn finding(&self, step_library: &str) -> Option<popgauge_abi::Finding> {
        let gaps = self.gaps();
        (!gaps.is_empty()).then(|| {
            popgauge_abi::Finding::warning(
                NOT_SANDBOXED,
                format!(
                    "the plugin {step_library} ran in a worker process without {}: its code could read and write what the account running popgauge can; run it on a Linux kernel with Landlock (5.13 or later) and seccomp to contain it",
                    gaps.join(", ")
                ),
                popgauge_abi::Where::default(),
            )
        })
    }
}

/// Restricts this process as `plan` says and reports what is in force. Called by the worker
/// child, single-threaded, before it loads the library; every restriction is inherited by the
/// threads the library starts later.
pub fn apply(plan: &SandboxPlan) -> SandboxState {
    let limits = apply_limits(plan);
    let file_system = platform::restrict_file_system(plan);
    let system_calls = platform::filter_system_calls();
    SandboxState { file_system, system_calls, limits }
}

fn apply_limits(plan: &SandboxPlan) -> Restriction {
    #[cfg(unix)]
    {
        use rlimit::{Resource, setrlimit};
        // Writable private memory (heap and anonymous maps, Linux 4.7 and later); the address
        // space as a backstop for older kernels, with room for the genotype map and the
        // reserved but unused address space of allocators and thread stacks.
        let address_space = plan.memory_bytes.saturating_mul(2).saturating_add(read_bytes(&plan.read));
        // SIGXCPU at the soft limit (reported), SIGKILL a little later if it is ignored.
        let results = [
            setrlimit(Resource::DATA, plan.memory_bytes, plan.memory_bytes),
            setrlimit(Resource::AS, address_space, address_space),
            setrlimit(Resource::CPU, plan.cpu_seconds, plan.cpu_seconds.saturating_add(5)),
            setrlimit(Resource::CORE, 0, 0),
        ];
        match results.into_iter().find_map(Result::err) {
            None => Restriction::Enforced,
            Some(e) => Restriction::Unavailable(format!("setting a resource limit failed: {e}")),
        }
    }
    #[cfg(not(unix))]
    {
        let _ = plan;
        Restriction::Unavailable("resource limits need a Unix system".into())
    }
}

/// The total size of the files the plugin may read (they are mapped into its address space).
fn read_bytes(files: &[PathBuf]) -> u64 {
    files.iter().filter_map(|f| std::fs::metadata(f).ok()).map(|m| m.len()).sum()
}

#[cfg(target_os = "linux")]
mod platform {
    use std::collections::BTreeMap;

    use landlock::{
        ABI, Access, AccessFs, AccessNet, LandlockStatus, Ruleset, RulesetAttr, RulesetCreatedAttr, RulesetStatus,
        Scope, path_beneath_rules,
    };
    use seccompiler::{
        BpfProgram, SeccompAction, SeccompCmpArgLen, SeccompCmpOp, SeccompCondition, SeccompFilter, SeccompRule,
    };

    use super::{Restriction, SYSTEM_LIBRARIES, SandboxPlan};

    /// The newest Landlock ABI whose rights popgauge asks for; older kernels get what they have.
    const LANDLOCK_ABI: ABI = ABI::V6;

    pub(super) fn restrict_file_system(plan: &SandboxPlan) -> Restriction {
        let status = Ruleset::default()
            .handle_access(AccessFs::from_all(LANDLOCK_ABI))
            .and_then(|r| r.handle_access(AccessNet::from_all(LANDLOCK_ABI)))
            .and_then(|r| r.scope(Scope::from_all(LANDLOCK_ABI)))
            .and_then(|r| r.create())
            .and_then(|r| r.add_rules(path_beneath_rules(&plan.read, AccessFs::from_read(LANDLOCK_ABI))))
            .and_then(|r| r.add_rules(path_beneath_rules(SYSTEM_LIBRARIES, AccessFs::from_read(LANDLOCK_ABI))))
            .and_then(|r| r.add_rules(path_beneath_rules([&plan.write], AccessFs::from_all(LANDLOCK_ABI))))
            .and_then(|r| r.restrict_self());
        match status {
            Err(e) => Restriction::Unavailable(format!("Landlock refused the rules: {e}")),
            Ok(status) if status.ruleset == RulesetStatus::NotEnforced => {
                Restriction::Unavailable(match status.landlock {
                    LandlockStatus::NotEnabled => "Landlock is built into this kernel but not enabled".into(),
                    LandlockStatus::NotImplemented => "this kernel has no Landlock".into(),
                    _ => "Landlock enforced none of the rules".into(),
                })
            }
            // Partly enforced means an older Landlock: the file-system rules of its version hold.
            Ok(_) => Restriction::Enforced,
        }
    }

    pub(super) fn filter_system_calls() -> Restriction {
        match system_call_filters() {
            Err(e) => Restriction::Unavailable(format!("the seccomp filter cannot be built: {e}")),
            Ok(filters) => match filters.iter().try_for_each(|f| seccompiler::apply_filter(f)) {
                Ok(()) => Restriction::Enforced,
                Err(e) => Restriction::Unavailable(format!("the kernel refused the seccomp filter: {e}")),
            },
        }
    }

    /// Two filters: the forbidden calls kill the worker (SIGSYS, reported by the parent);
    /// `clone3`, whose flags a filter cannot read, answers "not implemented", so that the C
    /// library starts threads with `clone`, where a thread is told apart from a process.
    fn system_call_filters() -> Result<[BpfProgram; 2], seccompiler::Error> {
        let arch = std::env::consts::ARCH.try_into()?;
        let always = Vec::new;
        let mut forbidden: BTreeMap<i64, Vec<SeccompRule>> = BTreeMap::new();
        // Any socket but a local (Unix) one: no network, whatever the namespace offers.
        forbidden.insert(
            libc::SYS_socket,
            vec![SeccompRule::new(vec![SeccompCondition::new(
                0,
                SeccompCmpArgLen::Dword,
                SeccompCmpOp::Ne,
                libc::AF_UNIX as u64,
            )?])?],
        );
        // A clone without CLONE_THREAD is a new process.
        forbidden.insert(
            libc::SYS_clone,
            vec![SeccompRule::new(vec![SeccompCondition::new(
                0,
                SeccompCmpArgLen::Qword,
                SeccompCmpOp::MaskedEq(libc::CLONE_THREAD as u64),
                0,
            )?])?],
        );
        #[cfg(target_arch = "x86_64")]
        {
            forbidden.insert(libc::SYS_fork, always());
            forbidden.insert(libc::SYS_vfork, always());
        }
        for call in [
            libc::SYS_execve,
            libc::SYS_execveat,
            libc::SYS_ptrace,
            libc::SYS_process_vm_readv,
            libc::SYS_process_vm_writev,
        ] {
            forbidden.insert(call, always());
        }
        let kill = SeccompFilter::new(forbidden, SeccompAction::Allow, SeccompAction::KillProcess, arch)?;
        let clone3 = SeccompFilter::new(
            BTreeMap::from([(libc::SYS_clone3, always())]),
            SeccompAction::Allow,
            SeccompAction::Errno(libc::ENOSYS as u32),
            arch,
        )?;
        Ok([kill.try_into()?, clone3.try_into()?])
    }
}

#[cfg(not(target_os = "linux"))]
mod platform {
    use super::{Restriction, SandboxPlan};

    pub(super) fn restrict_file_system(_plan: &SandboxPlan) -> Restriction {
        Restriction::Unavailable("this operating system offers popgauge no file-system sandbox".into())
    }

    pub(super) fn filter_system_calls() -> Restriction {
        Restriction::Unavailable("this operating system offers popgauge no system-call filter".into())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn whole() -> SandboxState {
        SandboxState {
            file_system: Restriction::Enforced,
            system_calls: Restriction::Enforced,
            limits: Restriction::Enforced,
        }
    }

    #[test]
    fn a_whole_sandbox_has_no_finding() {
        assert_eq!(whole().gaps(), Vec::<String>::new());
        assert_eq!(whole().finding("plugins/libx.so"), None);
    }

    /// STYLE: the finding says what is missing, why, and what to do.
    #[test]
    fn a_missing_restriction_is_a_finding_that_names_it() {
        let state =
            SandboxState { file_system: Restriction::Unavailable("this kernel has no Landlock".into()), ..whole() };
        let finding = state.finding("plugins/libx.so").expect("a finding");
        assert_eq!(finding.code, NOT_SANDBOXED);
        assert_eq!(finding.level, popgauge_abi::FindingLevel::Warning);
        assert_eq!(
            finding.message,
            "the plugin plugins/libx.so ran in a worker process without file-system rules (this kernel has no Landlock): its code could read and write what the account running popgauge can; run it on a Linux kernel with Landlock (5.13 or later) and seccomp to contain it"
        );
    }

    #[test]
    fn the_plan_travels_as_json() {
        let plan = SandboxPlan {
            read: vec!["/tmp/a/0-libx.so".into()],
            write: "/tmp/a/worker-1".into(),
            memory_bytes: 1 << 30,
            cpu_seconds: 1200,
        };
        let text = serde_json::to_string(&plan).unwrap();
        assert_eq!(serde_json::from_str::<SandboxPlan>(&text).unwrap(), plan);
    }
}
