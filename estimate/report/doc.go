// Package report is everything rigwire writes for a person to read about
// a prediction or a run, and the one place its plots are drawn:
//
//   - a soak's report (Write): one self-contained HTML file (plots
//     embedded as data: URIs, CSS inline, no scripts, no outside assets)
//     plus the same plots as PNG files to attach to an e-mail. The soak
//     hands its run as a Soak (the scenario as written and as played, the
//     monitor, a Recorder of the relay's counts at each phase start, the
//     trip and the end); Soak.Data turns it and the monitor's summary into
//     Data; SoakInputs and Soak.Provenance say what ran, from which files;
//     SoakSummary is the JSON summary with that provenance; PhaseTable and
//     SoakProgress are the soak's text on stderr;
//   - a prediction (monitor predict): its text summary (WritePrediction),
//     its JSON (WritePredictionJSON), its one-line form (WritePredictionLine),
//     the CSV and the plot of a --vary sweep (WriteSweepCSV, WriteSweepPlot)
//     and of a --step response (WriteStepCSV, WriteStepPlot);
//   - a Monte-Carlo simulation beside its prediction (Simulation) and its
//     sample paths (WritePathsCSV).
//
// Every plot uses the one palette (palette.go), the axes of axes.go and
// the one render path of render.go (a canvas by format, a panic of the
// plotting library turned into an error). Times in seconds are written
// with profiles/laws.Seconds.
//
// Place in the flow: the last stage. profile → relay → tap → estimators
// (estimate/engine) → verdict → metrics and this report: it reads the
// prediction (estimate), the monitor's summary, history and phases
// (estimate/engine) and the relay's counts (emulate.Stats), and writes
// files and text; nothing reads from it but the commands.
package report
