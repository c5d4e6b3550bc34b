package main

import (
	"context"
	"fmt"
	"log/slog"
	"math"
	"net/netip"
	"sync"
	"time"

	"rigwire/cmd/internal/cli"
	"rigwire/emulate/rig"
	"rigwire/profiles"
)

// simRig is the simulated rig of `monitor soak --simulated-rig`: its
// controller runs from the start (the relay sends to it), its node from
// the scenario's start to its end.
type simRig struct {
	loop  *profiles.Loop
	start rig.Start
	ctl   *rig.Controller
	node  *rig.Node

	ctlStop, nodeStop context.CancelFunc
	wg                sync.WaitGroup
	nodeDone          chan struct{}
}

// newSimRig opens the simulated controller's socket and starts it.
func newSimRig(loop *profiles.Loop, log *slog.Logger) (*simRig, error) {
	st, err := rigStart(loop, "steady", log)
	if err != nil {
		return nil, err
	}
	ctl, err := rig.NewController(rig.ControllerConfig{Loop: loop, Start: st, Logger: log})
	if err != nil {
		return nil, cli.BadInput(fmt.Errorf("%s: simulated rig: %w", loop.File, err))
	}
	s := &simRig{loop: loop, start: st, ctl: ctl}
	var ctx context.Context
	ctx, s.ctlStop = context.WithCancel(context.Background())
	s.wg.Add(1)
	go func() {
		defer s.wg.Done()
		if err := ctl.Run(ctx); err != nil {
			log.Error("simulated controller", "err", err)
		}
	}()
	return s, nil
}

// startNode starts the node, sending to the relay at relay for the
// scenario's length (and one period more).
func (s *simRig) startNode(relay netip.AddrPort, total time.Duration, seed uint64, log *slog.Logger) error {
	periods := int(math.Ceil(total.Seconds()/s.loop.Period)) + 1
	node, err := rig.NewNode(rig.NodeConfig{Loop: s.loop, Relay: relay, Periods: periods, Seed: seed, Start: s.start, Logger: log})
	if err != nil {
		return cli.BadInput(fmt.Errorf("%s: simulated rig: %w", s.loop.File, err))
	}
	s.node = node
	var ctx context.Context
	ctx, s.nodeStop = context.WithCancel(context.Background())
	s.nodeDone = make(chan struct{})
	go func() {
		defer close(s.nodeDone)
		if err := node.Run(ctx); err != nil {
			log.Error("simulated node", "err", err)
		}
	}()
	log.Info("simulated rig", "node", node.LocalAddr().String(), "relay", relay.String(), "controller", s.ctl.LocalAddr().String())
	return nil
}

// stopNode stops the node and waits for its last commands' round trip.
func (s *simRig) stopNode(period float64) {
	if s.node == nil {
		return
	}
	s.nodeStop()
	<-s.nodeDone
	time.Sleep(2 * time.Duration(period*float64(time.Second)))
}

// stop stops the controller (and the node if it still runs).
func (s *simRig) stop() {
	if s.nodeStop != nil {
		s.nodeStop()
		<-s.nodeDone
	}
	s.ctlStop()
	s.wg.Wait()
}
