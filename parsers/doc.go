// Package parsers turns the bytes of an instrument's result file into
// values: a run id and one number (or a stated failure) per response, each
// with the line and column it came from.
//
// Formats are held in a Registry value; Default lists every built-in format,
// and tests may build smaller registries. Parsers never touch the file
// system: the agent reads the file and passes its name and content. A file
// that cannot be parsed yields a *ParseError naming the file, line, column
// and reason, never a panic.
package parsers
