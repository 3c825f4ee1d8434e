//! Thread control: `--threads N` or the environment variable
//! `TAUTLINE_THREADS` (the option wins) sets the size of the rayon pool that
//! assembles residual and tangent; without either, every core is used.
//!
//! faer's parallelism is set here too, and set to sequential: its parallel
//! sparse LDLᵀ was measured to change the round-off of the results with the
//! thread count (a 36k-DOF net, `solve` on 1 and 2 threads: residuals differ
//! in the sixth digit), while assembly's fixed-order sums do not. Results
//! therefore stay bit-identical on any number of threads.

/// The environment variable read when `--threads` is not given.
pub const ENV: &str = "TAUTLINE_THREADS";

/// The thread count asked for, from the option or the environment; `None`
/// for "all cores".
pub fn requested(option: Option<usize>) -> Result<Option<usize>, String> {
    if let Some(n) = option {
        return if n == 0 { Err("--threads must be at least 1".into()) } else { Ok(Some(n)) };
    }
    match std::env::var(ENV) {
        Err(_) => Ok(None),
        Ok(v) => match v.trim().parse::<usize>() {
            Ok(n) if n > 0 => Ok(Some(n)),
            _ => Err(format!("{ENV}={v:?}: expected a whole number of threads, at least 1; unset it to use every core")),
        },
    }
}

/// Builds the global rayon pool and sets faer's global parallelism
/// (sequential, see the module docs). Returns the number of threads in use.
pub fn configure(option: Option<usize>) -> Result<usize, String> {
    let wanted = requested(option)?;
    let mut builder = rayon::ThreadPoolBuilder::new();
    if let Some(n) = wanted {
        builder = builder.num_threads(n);
    }
    // Fails only if a pool exists already, which then stays in use.
    let _ = builder.build_global();
    let n = rayon::current_num_threads();
    faer::set_global_parallelism(faer::Par::Seq);
    Ok(n)
}
