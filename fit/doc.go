// Package fit turns a model file and visibility datasets into posterior
// inferences: it parses and validates the model file, builds the likelihood
// across datasets, runs the optimiser, the ensemble MCMC sampler or nested
// sampling, checkpoints long runs, and writes the results a paper needs.
//
// # Samplers
//
// The samplers are generic: they see a Problem, a parameter count, a
// log-likelihood safe for concurrent use and a Prior, and know nothing of
// lenses. Each run returns a result whose Status (Converged, NotConverged,
// Interrupted) is kept apart from the error, which reports failures only.
//
//   - Optimize: maximum a posteriori by Nelder–Mead then BFGS from several
//     prior draws in parallel, with the Laplace covariance from a
//     finite-difference Hessian.
//   - Ensemble: the affine-invariant stretch-move ensemble sampler, run
//     until the chain is 50 integrated autocorrelation times long
//     (AutocorrTime).
//   - Nested: nested sampling with slice-sampling replacements in the
//     whitened unit hypercube, giving ln Z with its error and weighted
//     posterior samples.
//
// Settings structs follow one rule: the zero value of every field is the
// documented default, and the caller's struct is never written to.
//
// Randomness: Optimize takes an explicit *rand.Rand; Ensemble and Nested take
// a Seed and derive their own PCG streams (one per walker, one per nested
// replacement), so a run is reproducible bit for bit whatever the number of
// cores, and its random state can be saved in a checkpoint.
//
// Long runs: a Checkpoint in the settings saves the full sampler state
// atomically every minute, on cancellation of the run's context and at the
// end; Checkpoint.Resume continues, ending bit for bit as an uninterrupted
// run would. Commands obtain a context cancelled on SIGINT/SIGTERM from
// SignalContext; the package itself installs no signal handlers and prints
// nothing unless given a Progress (ProgressBar draws one on a terminal).
package fit
