// Package cli is what both rigwire commands share between reading their
// arguments and exiting, so that impair and monitor behave alike:
//
//   - one dispatcher ([Dispatch]) that picks a subcommand, prints usage
//     and turns the subcommand's error into an exit status ([Status]);
//   - the kinds of error a subcommand returns: nil, or a [UsageError] (a
//     bad flag or argument) or an [InputError] (a file that does not load
//     or validate, or a loop the prediction cannot use), both status 2; an
//     [Exit] with its own status (a verdict, a trip); a [Help] (-h);
//     anything else is an error while running, status 1 (the table is
//     cmd/internal/exitcode);
//   - a flag set ([Flags]) whose -h prints the command's help with its
//     exit statuses, whose refused values say what the flag takes, that
//     takes flags before and after positional arguments
//     ([Flags.ParseInterspersed]), and whose --log-level makes the
//     command's logger ([Flags.LogLevel]);
//   - the flags of an address ([AddrFlag]) and of one sender
//     ([SenderFlag]), and the check of a --metrics address
//     ([CheckMetricsAddr]), which read them with emulate/endpoint, the one
//     address parser of flags and files (a links file's keys too).
//
// Place in the flow: none of its own. It sits at the edge of the commands
// (cmd/impair, cmd/monitor): flags and arguments in, exit status out; the
// work between is done by emulate, estimate and profiles.
package cli
