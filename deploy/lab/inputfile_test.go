package lab

import (
	"testing"

	"rigwire/profiles/yamlpos/yamlpostest"
)

// TestLoadNotRegular: a lab topology that is a named pipe, a directory, a
// device or too large is refused at once, naming it.
func TestLoadNotRegular(t *testing.T) {
	yamlpostest.RefusesNonRegular(t, "lab topology", "lab.yaml", func(path string) error {
		_, err := Load(path)
		return err
	})
}
