// Package examples holds every example file of the project in one place,
// and builds the demo's into the commands.
//
//	profiles/   network profiles of our own scenarios (a warehouse Wi-Fi,
//	            a switched cell, an AGV corridor, a shared uplink)
//	loops/      loop files (a conveyor, a pick arm, a pump)
//	scenarios/  soak scenarios
//	demo/       the loop and profile `monitor demo` runs (built in: Demo)
//	checks/     loops and profiles the end-to-end tests run
//
// Place in the flow: the files a run starts from. Tests load them from
// here by path; nothing else in the repository keeps example files (test
// fixtures of one package, such as malformed files, stay in that package's
// testdata).
package examples

import "embed"

// Demo is the demo's loop and profile (demo/diverter.yaml and
// demo/diverter-wifi.yaml, which it names), built into the commands so
// that `go run ./cmd/monitor demo` works from any directory.
//
//go:embed demo/diverter.yaml demo/diverter-wifi.yaml
var Demo embed.FS
