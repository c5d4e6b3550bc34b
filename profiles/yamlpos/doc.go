// Package yamlpos reads the project's input files: it opens a file only if
// it is a regular file under the cap of its kind, counts a YAML file's
// values before parsing it, and walks the parsed nodes so that every error
// names the file, the line, the key path and what was expected.
//
// Place in the flow: the first step of every run. Every file a command
// reads — profile, scenario, loop, links file, lab topology, empirical
// samples, probe trace — enters through this package (profiles, the
// relay's links parser and deploy/lab decode with it); nothing here knows
// what the files mean.
package yamlpos
