//go:build tools

// Package tools pins modules that the repository's packages will import, so
// that go mod tidy keeps them while the packages are written.
package tools

import (
	_ "github.com/prometheus/client_golang/prometheus"
	_ "github.com/vishvananda/netlink"
	_ "golang.org/x/net/ipv4"
	_ "golang.org/x/sys/unix"
	_ "gonum.org/v1/gonum/mat"
	_ "gonum.org/v1/plot"
	_ "gopkg.in/yaml.v3"
)
