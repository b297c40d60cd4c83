// Package agent wires one campaign's loop together and owns every file the
// daemon writes: the journal, the quarantine folder, the sign-off inbox and
// the handoff files.
//
// It is the one place where watch, parsers, planner and safety meet. Watch
// reports settled result files; the agent reads each one, parses it,
// appends it to the journal (keyed by the content's SHA-256, so nothing is
// ingested twice, also across restarts), asks the planner for the next
// setpoint, passes it through the safety gate, and writes it to the
// instrument's handoff folder only when the gate passed it or a person
// signed off a held move. Anything that goes wrong on the way writes no
// setpoint.
//
// The agent never writes into an export folder.
package agent
