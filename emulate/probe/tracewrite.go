package probe

import (
	"fmt"
	"io"
	"strconv"
	"time"

	"rigwire/profiles/trace"
)

// TraceInfo is the metadata of a probe run that its trace records.
type TraceInfo struct {
	Target       string  // where the probes went
	Rate         float64 // probes per second
	Size         int     // bytes of each probe
	ClocksSynced bool    // the prober's and the echo's clocks are synchronised
}

// WriteTrace writes recs as a probe trace, the format profiles/trace
// reads: one line per probe, times in seconds. One-way delays are written
// only with synchronised clocks.
func WriteTrace(w io.Writer, recs []Record, info TraceInfo) {
	fmt.Fprintln(w, trace.TraceHeaderComment)
	fmt.Fprintf(w, "# target: %s\n", info.Target)
	fmt.Fprintf(w, "# interval_s: %s\n", strconv.FormatFloat(1/info.Rate, 'g', -1, 64))
	fmt.Fprintf(w, "# size_bytes: %d\n", info.Size)
	fmt.Fprintf(w, "# clocks_synced: %v\n", info.ClocksSynced)
	fmt.Fprintln(w, "# times in seconds; send_s on the prober's monotonic clock since the first probe;")
	fmt.Fprintln(w, "# rtt_s on that clock; one_way_s and back_s from wall-clock stamps (only with clocks_synced)")
	fmt.Fprintln(w, "seq,send_s,status,rtt_s,one_way_s,back_s,copies,reordered")
	for i, r := range recs {
		status, rtt, ow, back := "lost", "", "", ""
		if r.Copies > 0 {
			status, rtt = "delivered", secs(max(r.RTT, 0))
			if info.ClocksSynced {
				// Synchronised clocks still differ by their residual offset; a
				// negative one-way delay is clipped to 0 (and says the offset
				// exceeds the delay).
				ow, back = secs(max(r.OneWay, 0)), secs(max(r.Back, 0))
			}
		}
		reord := "0"
		if r.Reordered {
			reord = "1"
		}
		fmt.Fprintf(w, "%d,%s,%s,%s,%s,%s,%d,%s\n", i, secs(r.Sent), status, rtt, ow, back, r.Copies, reord)
	}
}

// secs writes a duration as seconds with nanosecond digits.
func secs(d time.Duration) string { return strconv.FormatFloat(d.Seconds(), 'f', 9, 64) }
