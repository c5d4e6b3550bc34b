package examples

import "embed"

// Demo is the demo's loop and profile (demo/diverter.yaml and
// demo/diverter-wifi.yaml, which it names), built into the commands so
// that `go run ./cmd/monitor demo` works from any directory.
//
//go:embed demo/diverter.yaml demo/diverter-wifi.yaml
var Demo embed.FS
