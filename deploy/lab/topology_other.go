//go:build !linux

package lab

import (
	"errors"
	"io"
)

var errLinux = errors.New("lab: network namespaces need Linux")

// Up needs Linux.
func Up(cfg Config, w io.Writer) error { return errLinux }

// Down needs Linux.
func Down(cfg Config, w io.Writer) error { return errLinux }

// Exists reports nothing outside Linux.
func Exists(cfg Config) map[string]bool { return map[string]bool{} }
