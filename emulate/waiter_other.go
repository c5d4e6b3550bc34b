//go:build !linux

package emulate

func newPreciseWaiter() (waiter, error) { return newTimerWaiter(), nil }
