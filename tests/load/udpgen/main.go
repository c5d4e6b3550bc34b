package main

import (
	"encoding/json"
	"flag"
	"fmt"
	"log/slog"
	"math"
	"net"
	"os"
	"runtime"
	"time"

	"golang.org/x/net/ipv4"
	"golang.org/x/sys/unix"

	"rigwire/tests/load/loadkit"
)

// report is what udpgen prints at the end.
type report struct {
	Run          uint32  `json:"run"`
	Size         int     `json:"size"`
	RateTarget   float64 `json:"rate_target"`
	Planned      uint64  `json:"planned"`
	Sent         uint64  `json:"sent"`
	SendErrors   uint64  `json:"send_errors"`
	LastError    string  `json:"last_error,omitempty"`
	Syscalls     uint64  `json:"syscalls"`
	ElapsedS     float64 `json:"elapsed_s"`
	RateAchieved float64 `json:"rate_achieved"`
	MaxLagS      float64 `json:"max_lag_s"`
	Truncated    bool    `json:"truncated"`
	StartNs      int64   `json:"start_ns"`
}

type config struct {
	to       string
	size     int
	rate     float64
	duration time.Duration
	tick     time.Duration
	batch    int
	run      uint
	out      string
}

func main() {
	var c config
	flag.StringVar(&c.to, "to", "", "loopback HOST:PORT to send to (required)")
	flag.IntVar(&c.size, "size", 64, "datagram size in bytes, at least the 24-byte header")
	flag.Float64Var(&c.rate, "rate", 1000, "datagrams per second")
	flag.DurationVar(&c.duration, "duration", 2*time.Second, "how long to send")
	flag.DurationVar(&c.tick, "tick", 100*time.Microsecond, "shortest interval between wakes")
	flag.IntVar(&c.batch, "batch", 64, "most datagrams per sendmmsg call")
	flag.UintVar(&c.run, "run", 1, "run number written in each datagram")
	flag.StringVar(&c.out, "json", "", "write the JSON report here instead of stdout")
	flag.Parse()
	if err := run(c); err != nil {
		slog.Error("udpgen", "err", err)
		os.Exit(1)
	}
}

func (c config) validate() error {
	switch {
	case c.size < loadkit.HeaderLen || c.size > 65507:
		return fmt.Errorf("-size: want %d to 65507 bytes, got %d", loadkit.HeaderLen, c.size)
	case !(c.rate > 0) || c.rate > 5e6:
		return fmt.Errorf("-rate: want a rate in (0, 5e6] datagrams/s, got %g", c.rate)
	case c.duration <= 0 || c.duration > time.Hour:
		return fmt.Errorf("-duration: want (0, 1h], got %v", c.duration)
	case c.tick < time.Microsecond || c.tick > time.Second:
		return fmt.Errorf("-tick: want 1us to 1s, got %v", c.tick)
	case c.batch < 1 || c.batch > 1024:
		return fmt.Errorf("-batch: want 1 to 1024, got %d", c.batch)
	case c.run > math.MaxUint32:
		return fmt.Errorf("-run: want at most %d, got %d", uint32(math.MaxUint32), c.run)
	}
	return nil
}

func run(c config) error {
	if err := c.validate(); err != nil {
		return err
	}
	to, err := loadkit.ParseLoopback(c.to)
	if err != nil {
		return fmt.Errorf("-to: %w", err)
	}
	conn, err := net.DialUDP("udp", nil, net.UDPAddrFromAddrPort(to))
	if err != nil {
		return fmt.Errorf("opening a socket to %v: %w", to, err)
	}
	defer conn.Close()
	clock, err := loadkit.NewMono()
	if err != nil {
		return err
	}

	rep := send(ipv4.NewPacketConn(conn), clock, c)

	out := os.Stdout
	if c.out != "" {
		f, err := os.Create(c.out)
		if err != nil {
			return fmt.Errorf("-json: %w", err)
		}
		defer f.Close()
		out = f
	}
	enc := json.NewEncoder(out)
	enc.SetIndent("", "  ")
	return enc.Encode(rep)
}

// send paces the datagrams out and returns the tally. It runs on a locked
// OS thread, since clock_nanosleep blocks the thread it is called on.
func send(pc *ipv4.PacketConn, clock *loadkit.Mono, c config) report {
	runtime.LockOSThread()
	defer runtime.UnlockOSThread()

	total := uint64(math.Round(c.rate * c.duration.Seconds()))
	rep := report{Run: uint32(c.run), Size: c.size, RateTarget: c.rate, Planned: total}

	bufs := make([][]byte, c.batch)
	msgs := make([]ipv4.Message, c.batch)
	for i := range msgs {
		bufs[i] = make([]byte, c.size)
		msgs[i].Buffers = [][]byte{bufs[i]}
	}
	nsPer := 1e9 / c.rate
	tick := c.tick.Nanoseconds()
	// A bound in time whatever happens: twice the planned duration plus a
	// second, after which the report says truncated.
	start := clock.Now()
	rep.StartNs = start
	deadline := start + 2*c.duration.Nanoseconds() + int64(time.Second)
	var seq uint64
	lastWake := start
	for seq < total {
		now := clock.Now()
		if now > deadline {
			rep.Truncated = true
			break
		}
		dueAt := start + int64(float64(seq)*nsPer)
		if lag := now - dueAt; lag > 0 && float64(lag)/1e9 > rep.MaxLagS {
			rep.MaxLagS = float64(lag) / 1e9
		}
		due := min(total, uint64(float64(now-start)/nsPer)+1)
		for seq < due {
			n := int(min(due-seq, uint64(c.batch)))
			stamp := clock.Now()
			for i := range n {
				loadkit.Header{Run: uint32(c.run), Seq: seq + uint64(i), SentNs: stamp}.Put(bufs[i])
			}
			done := 0
			for done < n {
				k, err := pc.WriteBatch(msgs[done:n], 0)
				rep.Syscalls++
				if k > 0 {
					done += k
					rep.Sent += uint64(k)
				}
				if err != nil {
					// The datagram at the head failed (a refused port, a
					// full queue): count it and go on with the rest.
					rep.SendErrors++
					rep.LastError = err.Error()
					done++
				}
			}
			seq += uint64(n)
		}
		if seq >= total {
			break
		}
		wake := max(start+int64(float64(seq)*nsPer), lastWake+tick)
		sleepUntil(wake)
		lastWake = wake
	}
	end := clock.Now()
	rep.ElapsedS = float64(end-start) / 1e9
	if rep.ElapsedS > 0 {
		rep.RateAchieved = float64(rep.Sent) / rep.ElapsedS
	}
	return rep
}

// sleepUntil blocks the thread until CLOCK_MONOTONIC reaches t nanoseconds.
func sleepUntil(t int64) {
	ts := unix.NsecToTimespec(t)
	for {
		err := unix.ClockNanosleep(unix.CLOCK_MONOTONIC, unix.TIMER_ABSTIME, &ts, nil)
		if err != unix.EINTR {
			return
		}
	}
}
