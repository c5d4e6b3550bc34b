//go:build !linux

package lab

import (
	"errors"
	"io"
)

var errLinux = errors.New("lab: network namespaces need Linux")

// Build needs Linux.
func Build(cfg Config, w io.Writer) error { return errLinux }

// Remove needs Linux.
func Remove(cfg Config, w io.Writer) error { return errLinux }

// Exists reports nothing outside Linux.
func Exists(cfg Config) map[string]bool { return map[string]bool{} }
