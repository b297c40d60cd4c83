// Package safety is the gate every setpoint passes before it may reach an
// instrument: a pure decision over the campaign's limits.
//
// Check returns Pass, Hold (outside the review limits: a person must sign
// off) or Refuse (outside the hard limits, or not a valid setpoint at all:
// never handed off, not even with sign-off), with a reason for every limit
// crossed. It imports only campaign and does no I/O, so the same gate can
// check a setpoint typed by hand. Anything it cannot judge it refuses: it
// fails closed.
//
// The gate is a software check, not a safety system: hardware interlocks
// and the limits of the lab's own hazard review stay in place.
package safety
