package cli

import (
	"context"
	"os"
	"os/signal"
	"syscall"
)

// SignalContext is a context that ends on SIGINT or SIGTERM, how every
// command that runs until stopped learns it should stop; cancel it to
// give the signals back their default action.
func SignalContext() (context.Context, context.CancelFunc) {
	return signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
}
