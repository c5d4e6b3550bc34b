package rig

// verdict is what an end of the loop does with a sample (the controller)
// or a command (the node's actuator) that has just arrived, under the
// loop's timing policy (estimate/model.md §13, profiles.Timing).
type verdict uint8

const (
	// use: younger than the horizon and newer than the last one used.
	use verdict = iota
	// expired: its age on arrival is the horizon or more — a stale
	// sample, a late command. Judged first, whatever its sequence.
	expired
	// repeated: the same sequence number as the last one used.
	repeated
	// overtaken: a sequence number below the last one used — a newer
	// one arrived first.
	overtaken
)

// judge applies the timing policy to one arrival: age is its age on
// arrival (arrival time − t_k of its sample) and horizon the end's
// horizon (Ns·h or Na·h), both in ns; k is its sample's sequence number
// and last the sequence number of the last one used (−1: none yet).
// Horizons of one period give the rule of estimate/model.md §1.
func judge(age, horizon, k, last int64) verdict {
	switch {
	case age >= horizon:
		return expired
	case k == last:
		return repeated
	case k < last:
		return overtaken
	}
	return use
}
