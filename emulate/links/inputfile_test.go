package links

import (
	"testing"

	"rigwire/profiles/yamlpos/yamlpostest"
)

// TestLinksFileNotRegular: a links file that is a named pipe, a
// directory, a device or too large is refused at once, naming it.
func TestLinksFileNotRegular(t *testing.T) {
	yamlpostest.RefusesNonRegular(t, "links file", "links.yaml", func(path string) error {
		_, err := Load(path)
		return err
	})
}
