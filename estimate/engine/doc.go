// Package engine measures a running loop: it decodes the rig's sensor
// datagrams with the loop's decode section, forms e = setpoint − y, feeds
// the online estimators (estimate/online: whole run and sliding
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
//		MinSamples:  0,     // samples the run's verdict needs (0: DefaultMinSamples, 400)
//		MaxDatagram: 4096,  // longer datagrams count as oversized
//	})
//	m.RegisterMetrics(reg)              // rigwire_monitor_* on a prometheus.Registerer
//	relayCfg.TapFunc = m.Feed           // Feed(payload []byte, at time.Time): no allocation,
//	                                    // safe from any goroutine, payload not retained
//	m.SetSource(tap)                    // optional: Serve decodes only datagrams from tap (port 0: any port of
//	                                    // its address); the others are counted as strangers, never decoded
//	err = m.Serve(ctx, conn)            // or: read datagrams from a *net.UDPConn until ctx ends
//	err = m.ServeFor(ctx, conn, d, every, w) // Serve for d (0: until ctx ends), a status line on w every interval
//	p := m.Progress()                   // Progress{Elapsed, Samples, Measured, CILow, CIHigh, Predicted}; p.String() for a status line
//	s := m.Summary()                    // Summary: the JSON summary of `monitor run` (json tags), with Verdict,
//	                                    // VerdictReason and VerdictRule; s.VerdictLine() says it in one line
//	err = engine.WriteSummary(stdout, path, s) // indented JSON to stdout ("" or "-") or atomically to path
//
// Soaks, the safety trip and the history:
//
//	m.PlanPhases(names)                 // the scenario's phases, so that those never started are listed as not run
//	m.StartPhase(i, name, pred, settle, check) // closes the running phase, starts phase i (fresh estimate;
//	                                           // samples arriving before now+settle are not judged)
//	m.UpdatePrediction(pred)            // a ramp's step: later samples compare with pred
//	preds, err := engine.PredictSteps(loop, steps, progress) // one prediction per distinct profile a scenario's steps predict with
//	relay.Play(ctx, names, steps, total, m.StepFunc(sc, preds, atPhase)) // StartPhase / UpdatePrediction at each step
//	m.EndPhases(interrupted)            // closes the running phase at the end of the soak (cut short when interrupted)
//	ps := m.Phases()                    // []PhaseResult, judged: pass, fail, inconclusive, not_run; the running one "running"
//	err = m.SetTrip(loop.Trip, fire)    // fire(trip.Event) once, from Feed, outside the monitor's lock
//	ev := m.Tripped()                   // *trip.Event, nil until it fires
//	h := m.History()                    // []Point, at most 4096, every Options.HistoryEvery (doubling)
//
// A phase's predicted value is the mean of the predicted E[eᵀe] in force
// at each of its judged samples: a quasi-static approximation for ramps
// slow against the loop's settling time. The run's own estimate and
// verdict always compare with the monitor's prediction; the prediction in
// force (StartPhase, UpdatePrediction) is what the phases, the trip's
// ratio and the history use.
//
// # Verdicts
//
// The run's verdict and each phase's tolerance check follow one rule
// (judgeInterval; VerdictRule states it in the summary): agree, above,
// below, inconclusive (too few samples or batches, batches short for the
// loop's correlation time, or an interval too wide to have disagreed) or
// unstable (the prediction is not certified stable). The interval is the
// online estimator's log-scale batch-means interval (online.Estimator;
// CIMethod). A phase passes, fails, is inconclusive, or is not run; its
// bound check (max_second_moment) uses the same interval; see judgePhase.
// After the safety trip fires no sample is estimated (the run's, the
// windows' or the phases'): they are counted in after_trip_samples, and
// the phase the trip cut is judged on the samples before it.
//
// # Exit codes
//
// The engine gives verdicts, not exit statuses: the commands turn a
// Summary into one (cmd/internal/exitcode: OfRun, OfSoak, OfTrip).
//
// pred may be nil: New then computes estimate.Predict itself.
//
// # Metrics
//
// Read from the estimators at each scrape (Feed touches none). window is
// "run" (the whole run) or a window's length as --windows spells it
// ("1m", "10m"). A measured value that does not exist yet (no sample, an
// interval before its window holds two complete batches) is absent, never
// NaN; predicted values are NaN when the prediction has none.
//
//	rigwire_monitor_error_second_moment{window}          measured E[eᵀe]
//	rigwire_monitor_error_second_moment_ci_low{window}   95 % batch-means interval (log scale);
//	rigwire_monitor_error_second_moment_ci_high{window}  absent with fewer than 2 complete batches
//	rigwire_monitor_error_second_moment_batches{window}  complete batches behind the interval
//	rigwire_monitor_error_mean{window,output}            measured E[e] per output
//	rigwire_monitor_error_std{window}                    √(E[eᵀe] − |E[e]|²)
//	rigwire_monitor_effective_samples{window}            n·s²/(b·S_B²)
//	rigwire_monitor_window_samples{window}               samples behind each estimate
//	rigwire_monitor_measured_to_predicted_ratio{window}
//	rigwire_monitor_predicted_error_second_moment        the run's; NaN when not mean-square stable
//	rigwire_monitor_predicted_error_second_moment_in_force  the running phase's (ramp step's), else the run's
//	rigwire_monitor_predicted_mean_square_stable         0 or 1
//	rigwire_monitor_predicted_spectral_radius
//	rigwire_monitor_predicted_loss_margin                NaN with --no-margin
//	rigwire_monitor_tolerance_ratio                      in force: the running phase's check, else --tolerance
//	rigwire_monitor_missing_samples                      gauge: never seen (gaps − late)
//	rigwire_monitor_samples_total                        estimated (after warm-up)
//	rigwire_monitor_datagrams_total                      received
//	rigwire_monitor_sample_gaps_total                    sequence numbers skipped
//	rigwire_monitor_late_samples_total                   reordered, used
//	rigwire_monitor_duplicate_samples_total              not used
//	rigwire_monitor_stale_samples_total                  older than the reorder window, not used
//	rigwire_monitor_sequence_restarts_total
//	rigwire_monitor_warmup_skipped_samples_total
//	rigwire_monitor_after_trip_samples_total             decoded after the trip, estimated nowhere
//	rigwire_monitor_stranger_datagrams_total{reason}     from anyone but --from (the relay's tap), never decoded:
//	                                                     other_host, other_port
//	rigwire_monitor_decode_failures_total{reason}        too_short, not_a_number, not_finite, out_of_range,
//	                                                     bad_sequence, oversized
//	rigwire_monitor_phase{index,phase}                   1 for the running soak phase, 0 for the others
//	                                                     (every planned phase listed from the soak's start)
//	rigwire_monitor_phase_error_second_moment{phase}     measured over the phase's judged samples
//	rigwire_monitor_phase_predicted_error_second_moment{phase}  mean prediction in force (NaN unstable)
//	rigwire_monitor_phase_error_second_moment_ci_low{phase}   the interval the phase's verdict uses (the
//	rigwire_monitor_phase_error_second_moment_ci_high{phase}  worst case when its batches are short);
//	                                                     absent until it has min_samples and 10 batches
//	rigwire_monitor_phase_tolerance_ratio{phase}         the check's tolerance; absent without one
//	rigwire_monitor_phase_passed{phase}                  1 pass, 0 fail; absent while running, inconclusive, not run
//	rigwire_monitor_phase_inconclusive{phase}            1 inconclusive or not run, 0 pass or fail; absent while running
//	rigwire_monitor_trip_active                          0, or 1 once the safety trip fired (latched)
//	rigwire_monitor_trips_total{reason}                  abs_error, second_moment, ratio (0 or 1)
//
// Every datagram read is exactly one of: a stranger's (SetSource; not in
// datagrams_total), a sample, a warm-up skip, a sample after the trip, a
// duplicate or stale sample, a decode failure — so that the summary's
// counts add up to its datagrams. An output beyond ±datagram.MaxOutput
// (1e50), NaN or infinite is a decode failure (out_of_range, not_finite,
// or not_a_number for text that is not a decimal number): the estimators
// sum squares of each sample's eᵀe, which stay finite under that bound,
// so one absurd value never makes a run's estimate or interval infinite
// or NaN.
//
// Place in the flow: profile → relay → tap → this engine → verdict →
// metrics and report. It takes each sensor datagram the relay's tap sends
// (Serve) or hands it in process (Feed), decodes it (profiles/datagram),
// feeds the estimators (estimate/online), compares them with the
// prediction (estimate), fires the safety trip (emulate/trip) and gives
// the summary and the metrics; estimate/report draws what it measured,
// the commands turn its verdicts into exit statuses.
package engine
