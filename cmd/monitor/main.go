// Command monitor predicts and measures how a control loop behaves over a
// lossy, delaying network.
//
//	monitor predict LOOP.yaml [--json] [--vary loss=0:0.3:0.01] [--step N] [--plot FILE] [--strict]
//	monitor simulate LOOP.yaml --periods N --runs R [--seed S] [--paths FILE]
//	monitor run --loop LOOP.yaml --listen HOST:PORT [--metrics HOST:PORT] [--duration D] [--summary FILE]
//
// run receives the rig's sensor datagrams and estimates E[eᵀe] online
// beside the prediction (estimate/engine).
//
// predict computes what theory says of the sampled-data jump system
// (package estimate: mean-square stability, the spectral radius of the
// second-moment operator, the steady error moments, the loss margin);
// simulate runs the same jump system by Monte Carlo.
//
// Every command exits with a status of the one table in
// cmd/internal/exitcode: an error of its flags or of a file it reads
// (cli.UsageError, cli.InputError) is 2, an error while running is 1, and the
// verdicts have their own codes (cli.Exit).
//
// Place in the flow: the measuring side's command line. It only reads
// flags, wires the libraries and turns their results into exit statuses:
// predict and simulate → estimate (the prediction, the Monte Carlo) and
// estimate/report (their text, CSV, JSON and plots); run → estimate/engine
// on the relay's tap (trip requests through emulate/trip); rig →
// emulate/rig; demo, serve and soak → emulate/bench (relay and monitor in
// one process), soak's phases through estimate/engine and its report
// through estimate/report.
package main

import (
	"io"
	"os"

	"rigwire/cmd/internal/cli"
	"rigwire/cmd/internal/exitcode"
)

var usage = `usage: monitor COMMAND [arguments]

commands:
  predict LOOP.yaml    what theory predicts for the loop over its network profile
                       (--strict: exit 6 when not mean-square stable, 5 when it cannot tell)
  simulate LOOP.yaml   Monte-Carlo runs of the same loop model
  rig node|controller  the simulated rig's two ends, on real UDP sockets
  run --loop LOOP.yaml measure E[eᵀe] from the rig's sensor datagrams, beside the prediction
  calibrate --loop LOOP --listen HOST:PORT --controller HOST:PORT
                       measure the rig's own timing over a clean link and write it
                       as a rig timing file for the loop's compute_delay
  demo                 rig, relay and monitor on loopback: predicted vs measured
  serve --loop LOOP    relay and monitor of one rig in one process
  soak --loop LOOP --scenario FILE
                       play a scenario's phases on the relay and judge each phase;
                       --report DIR writes HTML and PNG plots

run "monitor COMMAND -h" for the flags of a command and the statuses it returns

` + exitcode.Help(exitcode.All, nil)

func main() {
	os.Exit(dispatch(os.Args[1:], os.Stdout, os.Stderr))
}

// commands are monitor's subcommands.
var commands = map[string]cli.Command{
	"predict":   cmdPredict,
	"simulate":  cmdSimulate,
	"rig":       cmdRig,
	"demo":      cmdDemo,
	"serve":     cmdServe,
	"soak":      cmdSoak,
	"run":       cmdRun,
	"calibrate": cmdCalibrate,
}

// dispatch runs a subcommand and returns its exit status (cli.Dispatch).
func dispatch(args []string, stdout, stderr io.Writer) int {
	return cli.Dispatch("monitor", usage, commands, map[string][]string{"rig": {"node", "controller"}}, args, stdout, stderr)
}

// parseArgs parses flags given before or after the one positional argument
// (the loop file), as in "monitor predict loop.yaml --json".
func parseArgs(fs *cli.Flags, args []string) (string, error) {
	pos, err := fs.ParseInterspersed(args)
	if err != nil {
		return "", err
	}
	if len(pos) != 1 {
		return "", cli.Usagef("want one loop file, got %d arguments", len(pos))
	}
	return pos[0], nil
}
