// Package engine measures a running loop: it decodes the rig's sensor
// datagrams with the loop's decode section, forms e = setpoint − y, feeds
// the online estimators of package estimate (whole run and sliding
// windows, batch-means confidence intervals) and compares them with the
// prediction. `monitor run`, the demo and an in-process relay (through
// emulate.Config.TapFunc) all use it.
//
// The API:
//
//	m, err := engine.New(loop, pred, engine.Options{
//		Windows:     []time.Duration{time.Minute, 10 * time.Minute}, // default
//		Warmup:      0,     // samples in the first Warmup (by count: Warmup/period) are skipped
//		Tolerance:   0.1,   // relative widening of the CI for the verdict
//		MaxDatagram: 4096,  // longer datagrams count as oversized
//	})
//	m.RegisterMetrics(reg)              // rigwire_monitor_* on a prometheus.Registerer
//	relayCfg.TapFunc = m.Feed           // Feed(payload []byte, at time.Time): no allocation,
//	                                    // safe from any goroutine, payload not retained
//	err = m.Serve(ctx, conn)            // or: read datagrams from a net.PacketConn until ctx ends
//	p := m.Progress()                   // Progress{Elapsed, Samples, Measured, CILow, CIHigh, Predicted}; p.String() for a status line
//	s := m.Summary()                    // Summary: the JSON summary of `monitor run` (json tags), with Verdict
//	code := s.ExitCode(strict)          // 0 unless strict: see ExitCode
//
// pred may be nil: New then computes estimate.Predict itself.
package engine
