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
//
// # Metrics
//
// Read from the estimators at each scrape (Feed touches none). window is
// "run" (the whole run) or a window's length in seconds ("60", "600").
//
//	rigwire_monitor_error_second_moment{window}          measured E[eᵀe]
//	rigwire_monitor_error_second_moment_ci_low{window}   95 % batch-means interval
//	rigwire_monitor_error_second_moment_ci_high{window}
//	rigwire_monitor_error_mean{window,output}            measured E[e] per output
//	rigwire_monitor_error_std{window}                    √(E[eᵀe] − |E[e]|²)
//	rigwire_monitor_effective_samples{window}            n·s²/(b·S_B²)
//	rigwire_monitor_window_samples{window}               samples behind each estimate
//	rigwire_monitor_measured_to_predicted_ratio{window}
//	rigwire_monitor_predicted_error_second_moment        NaN when not mean-square stable
//	rigwire_monitor_predicted_mean_square_stable         0 or 1
//	rigwire_monitor_predicted_spectral_radius
//	rigwire_monitor_predicted_loss_margin                NaN with --no-margin
//	rigwire_monitor_tolerance_ratio
//	rigwire_monitor_missing_samples                      gauge: never seen (gaps − late)
//	rigwire_monitor_samples_total                        estimated (after warm-up)
//	rigwire_monitor_datagrams_total                      received
//	rigwire_monitor_sample_gaps_total                    sequence numbers skipped
//	rigwire_monitor_late_samples_total                   reordered, used
//	rigwire_monitor_duplicate_samples_total              not used
//	rigwire_monitor_stale_samples_total                  older than the reorder window, not used
//	rigwire_monitor_sequence_restarts_total
//	rigwire_monitor_warmup_skipped_samples_total
//	rigwire_monitor_decode_failures_total{reason}        too_short, not_a_number, not_finite,
//	                                                     bad_sequence, oversized
//
// Every datagram read is exactly one of: a sample, a warm-up skip, a
// duplicate or stale sample, a decode failure.
package engine
