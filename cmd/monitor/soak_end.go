package main

import (
	"fmt"
	"io"
	"log/slog"
	"os"
	"path/filepath"
	"strings"

	"rigwire/cmd/internal/cli"
	"rigwire/cmd/internal/exitcode"
	"rigwire/cmd/internal/metricsrv"
	"rigwire/estimate/engine"
	"rigwire/estimate/report"
)

// The end of a soak: its JSON summary, its table, its report and its exit
// status.

// finishSoak writes the soak's summary (to summaryPath, or stdout), its
// per-phase table and, with reportDir, its report, and returns its exit.
func finishSoak(run *report.Soak, s *engine.Summary, code int, playErr error, summaryPath, reportDir string,
	stdout, stderr io.Writer, log *slog.Logger) error {
	prov := soakProvenance(run)
	if err := writeSummary(stdout, summaryPath, report.SoakSummary{Summary: s, Provenance: prov}); err != nil {
		return err
	}
	report.PhaseTable(stderr, s)
	for _, l := range s.FrequencyLines() {
		fmt.Fprintln(stderr, "run "+l)
	}
	if reportDir != "" {
		files, err := report.Write(reportDir, run.Data(s, prov, soakVerdict(s, code), code))
		if err != nil {
			return fmt.Errorf("--report: %w", err)
		}
		fmt.Fprintf(stderr, "report: %s\n", filepath.Join(reportDir, "report.html"))
		log.Debug("report files", "files", files)
	}
	return soakExit(s, code, playErr)
}

// soakExit is the soak's exit: nil for 0, else the status with a message
// naming the trip, the failed phases, or the phases that could not be
// judged.
func soakExit(s *engine.Summary, code int, playErr error) error {
	list := func(verdicts ...string) string {
		var out []string
		for _, p := range s.Phases {
			for _, v := range verdicts {
				if p.Verdict == v {
					out = append(out, fmt.Sprintf("%q (%s)", p.Name, p.Reason))
				}
			}
		}
		return strings.Join(out, ", ")
	}
	switch code {
	case exitcode.OK:
		return nil
	case soakExitTripped:
		return cli.Exit{Code: code, Msg: fmt.Sprintf("safety trip in phase %q: %s %.5g above the bound %.5g",
			s.Trip.Phase, s.Trip.Reason, s.Trip.Value, s.Trip.Bound)}
	case soakExitFailed:
		return cli.Exit{Code: code, Msg: "failed phase " + list(engine.PhaseFail)}
	case exitcode.Inconclusive:
		msg := ""
		if l := list(engine.PhaseInconclusive, engine.PhaseNotRun); l != "" {
			msg = "no phase failed, but these could not be judged: " + l
		}
		if playErr != nil {
			if msg != "" {
				msg += "; "
			}
			msg += "interrupted before the scenario's end: " + playErr.Error()
		}
		return cli.Exit{Code: code, Msg: msg}
	}
	return cli.Exit{Code: code}
}

// soakVerdict is the report's word for the soak's outcome.
func soakVerdict(s *engine.Summary, code int) string {
	switch {
	case s.Trip != nil:
		return "tripped"
	case code == exitcode.PhaseFailed:
		return "fail"
	case code != exitcode.OK:
		return "inconclusive"
	}
	return "pass"
}

// soakProvenance is the soak's provenance with the build that ran it.
func soakProvenance(run *report.Soak) *report.Provenance {
	bi := metricsrv.ReadBuild()
	wd, _ := os.Getwd()
	p := run.Provenance(append([]string(nil), os.Args...), wd)
	p.Version, p.Revision, p.Modified, p.Go = bi.Version, bi.Revision, bi.Modified, bi.Go
	return p
}
