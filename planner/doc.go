// Package planner proposes the next setpoint of a campaign: points of a
// Latin-hypercube initial design first, then the maximiser of expected
// improvement under a Gaussian-process surrogate fitted to the completed
// runs.
//
// Data in, proposals out: the planner does no I/O and keeps no state
// between calls beyond what the caller passes back (the previous fit, for a
// warm start). Every random choice is drawn from a source seeded by the
// campaign's seed and the proposal's index, so the same journal always
// yields the same proposal.
package planner
