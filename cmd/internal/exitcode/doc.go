// Package exitcode is the one table of exit statuses that every rigwire
// command uses, so that a lab script can branch on them whatever command
// it ran, and the functions that turn the monitor engine's verdicts into
// one ([OfRun], [OfSoak], [OfTrip] from an engine.Summary). Each command's
// help lists the statuses it can return, from [Help].
//
// Place in the flow: the last step. verdict (estimate/engine) → exit
// status (here) → the lab script; the engine gives verdicts, never exit
// statuses, and the commands return what this package computes.
package exitcode
