// Package yamlpostest holds the checks that every reader of a YAML input
// file shares in its tests, so that each reader is held to the same
// refusals by one table: [RefusesNonRegular] (a named pipe, a directory, a
// device or an oversized file is refused at once, naming what the file is
// for and its path, as yamlpos.ReadInputFile promises).
//
// Place in the flow: none; test code only. The tests of the readers
// beside yamlpos (emulate/links' links file, deploy/lab's topology) call
// it; no command imports it.
package yamlpostest
