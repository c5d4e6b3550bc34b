//go:build !linux

package rig

import "net"

func newReceiver(c *net.UDPConn) receiver { return &pollRecv{c: c} }
