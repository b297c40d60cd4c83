// Package examples holds the demo scenario: an invented bench process, its
// invented response law, and the configuration that hooks benchtender to
// the simulated instrument in package examples/sim.
//
// Everything here is invented for the demo. The process, the pigment, the
// instrument and every number are made up and describe no real chemistry.
// The package uses benchtender's public packages only.
package examples
