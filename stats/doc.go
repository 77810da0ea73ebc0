// Package stats holds the pure numerics of coeval: uncertainty levels, decay-constant calibrations,
// weighted means, densities of dates, proxy statistics, age–height models and comparisons.
//
// It does no I/O and imports only the standard library and gonum. Every random routine takes an explicit
// seed or *rand.Rand and records it in its result. Ages are in Ma (older = larger) and uncertainties are
// stored as 1σ; conversion to other levels happens at the edges.
package stats
