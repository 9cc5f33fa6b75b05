// Package fit turns a model file and visibility datasets into posterior
// inferences: it parses and validates the model file, builds the likelihood
// across datasets, runs the optimiser, the ensemble MCMC sampler or nested
// sampling, checkpoints long runs, and writes the results a paper needs.
package fit
