// Package campaign holds the domain types that every other package of
// benchtender shares: factors and the space they span, the response and its
// goal, setpoints, proposals and observations, each with a Validate method.
//
// It imports nothing but the standard library and does no I/O, so that
// planner, safety, parsers and agent can all pass values along without
// importing one another.
package campaign
