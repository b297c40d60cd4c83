// Package sim is a simulated instrument for the demo and the end-to-end
// tests: it reads setpoint files from a handoff folder, waits as if it ran
// the batch, and writes a result file into its export folder in a
// legacy-looking format (a preamble, semicolons, decimal commas, CRLF line
// ends), slowly, in two pieces, the way old instrument software does.
//
// Its response law and noise are supplied by the caller; the demo's are
// invented (package examples).
package sim
