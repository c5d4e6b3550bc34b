package main

import (
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"log/slog"
	"math"
	"net"
	"os"
	"os/signal"
	"syscall"
	"time"

	"golang.org/x/net/ipv4"
	"golang.org/x/sys/unix"

	"rigwire/tests/load/loadkit"
)

// latency is a summary of one-way latencies, in seconds.
type latency struct {
	Count uint64  `json:"count"`
	Min   float64 `json:"min"`
	P50   float64 `json:"p50"`
	P90   float64 `json:"p90"`
	P99   float64 `json:"p99"`
	P999  float64 `json:"p999"`
	Max   float64 `json:"max"`
	Mean  float64 `json:"mean"`
}

// report is what udpsink prints at the end.
type report struct {
	Run         uint32  `json:"run"`
	Received    uint64  `json:"received"` // distinct sequence numbers
	Duplicates  uint64  `json:"duplicates"`
	Reordered   uint64  `json:"reordered"`
	OutOfRange  uint64  `json:"out_of_range"`
	Gaps        uint64  `json:"gaps"` // missing below the highest number seen
	NextExp     uint64  `json:"next_expected"`
	Foreign     uint64  `json:"foreign"`   // load datagrams of another run
	Malformed   uint64  `json:"malformed"` // not load datagrams at all
	Bytes       uint64  `json:"bytes"`
	Syscalls    uint64  `json:"syscalls"`
	RcvbufBytes int     `json:"rcvbuf_bytes"`
	FirstNs     int64   `json:"first_ns"`
	LastNs      int64   `json:"last_ns"`
	Latency     latency `json:"latency_s"`
	Negative    uint64  `json:"negative_latencies"`
}

type config struct {
	listen string
	run    uint
	limit  uint64
	rcvbuf int
	batch  int
	maxDur time.Duration
	drain  time.Duration
	out    string
}

func main() {
	var c config
	flag.StringVar(&c.listen, "listen", "", "loopback HOST:PORT to receive on (required)")
	flag.UintVar(&c.run, "run", 1, "run number to count; datagrams of other runs are foreign")
	flag.Uint64Var(&c.limit, "limit", 1<<27, "highest sequence number tracked, bounding memory (limit/8 bytes)")
	flag.IntVar(&c.rcvbuf, "rcvbuf", 4<<20, "socket receive buffer to ask for, bytes")
	flag.IntVar(&c.batch, "batch", 64, "most datagrams per recvmmsg call")
	flag.DurationVar(&c.maxDur, "max-duration", 10*time.Minute, "stop by itself after this long")
	flag.DurationVar(&c.drain, "drain", 50*time.Millisecond, "on stop, keep reading what is queued for this long")
	flag.StringVar(&c.out, "json", "", "write the JSON report here instead of stdout")
	flag.Parse()
	if err := run(c); err != nil {
		slog.Error("udpsink", "err", err)
		os.Exit(1)
	}
}

func (c config) validate() error {
	switch {
	case c.run > math.MaxUint32:
		return fmt.Errorf("-run: want at most %d, got %d", uint32(math.MaxUint32), c.run)
	case c.limit < 1 || c.limit > 1<<33:
		return fmt.Errorf("-limit: want 1 to 2^33, got %d", c.limit)
	case c.rcvbuf < 0 || c.rcvbuf > 1<<30:
		return fmt.Errorf("-rcvbuf: want 0 to 1 GiB, got %d", c.rcvbuf)
	case c.batch < 1 || c.batch > 1024:
		return fmt.Errorf("-batch: want 1 to 1024, got %d", c.batch)
	case c.maxDur <= 0 || c.maxDur > 24*time.Hour:
		return fmt.Errorf("-max-duration: want (0, 24h], got %v", c.maxDur)
	case c.drain < 0 || c.drain > time.Minute:
		return fmt.Errorf("-drain: want 0 to 1m, got %v", c.drain)
	}
	return nil
}

func run(c config) error {
	if err := c.validate(); err != nil {
		return err
	}
	addr, err := loadkit.ParseLoopback(c.listen)
	if err != nil {
		return fmt.Errorf("-listen: %w", err)
	}
	conn, err := net.ListenUDP("udp", net.UDPAddrFromAddrPort(addr))
	if err != nil {
		return fmt.Errorf("listening on %v: %w", addr, err)
	}
	defer conn.Close()
	got, err := setRcvbuf(conn, c.rcvbuf)
	if err != nil {
		return err
	}
	clock, err := loadkit.NewMono()
	if err != nil {
		return err
	}

	s := &sink{run: uint32(c.run), clock: clock, seq: loadkit.NewSeqTracker(c.limit)}
	s.rep.RcvbufBytes = got
	done := make(chan error, 1)
	go func() { done <- s.receive(ipv4.NewPacketConn(conn), c.batch) }()

	sigs := make(chan os.Signal, 1)
	signal.Notify(sigs, syscall.SIGTERM, syscall.SIGINT)
	stopTimer := time.NewTimer(c.maxDur)
	select {
	case <-sigs:
	case <-stopTimer.C:
	case err := <-done:
		return fmt.Errorf("receiving: %w", err)
	}
	// Stop: the reader keeps going through what is queued until the
	// deadline, then returns a timeout.
	if err := conn.SetReadDeadline(time.Now().Add(c.drain)); err != nil {
		return err
	}
	if err := <-done; err != nil && !errors.Is(err, os.ErrDeadlineExceeded) {
		return fmt.Errorf("receiving: %w", err)
	}
	rep := s.report()

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

// sink is the receiver's state; receive owns it until it returns.
type sink struct {
	run   uint32
	clock *loadkit.Mono
	seq   *loadkit.SeqTracker
	lat   loadkit.Hist
	rep   report
}

// receive reads batches until the socket fails (a deadline on stop).
func (s *sink) receive(pc *ipv4.PacketConn, batch int) error {
	msgs := make([]ipv4.Message, batch)
	for i := range msgs {
		msgs[i].Buffers = [][]byte{make([]byte, 65536)}
	}
	for {
		n, err := pc.ReadBatch(msgs, 0)
		if err != nil {
			return err
		}
		now := s.clock.Now()
		s.rep.Syscalls++
		for i := range msgs[:n] {
			b := msgs[i].Buffers[0][:msgs[i].N]
			s.rep.Bytes += uint64(len(b))
			h, err := loadkit.ParseHeader(b)
			if err != nil {
				s.rep.Malformed++
				continue
			}
			if h.Run != s.run {
				s.rep.Foreign++
				continue
			}
			if s.rep.FirstNs == 0 {
				s.rep.FirstNs = now
			}
			s.rep.LastNs = now
			dup := s.seq.Duplicates
			s.seq.Add(h.Seq)
			if s.seq.Duplicates == dup {
				s.lat.Add(now - h.SentNs)
			}
		}
	}
}

func (s *sink) report() report {
	r := s.rep
	r.Run = s.run
	r.Received = s.seq.Unique
	r.Duplicates = s.seq.Duplicates
	r.Reordered = s.seq.Reordered
	r.OutOfRange = s.seq.OutOfRange
	r.Gaps = s.seq.Gaps()
	r.NextExp = s.seq.NextExp
	r.Negative = s.lat.Negative
	h := &s.lat
	r.Latency = latency{Count: h.Count()}
	if h.Count() > 0 {
		r.Latency.Min = float64(h.Min()) / 1e9
		r.Latency.P50 = h.Quantile(0.50) / 1e9
		r.Latency.P90 = h.Quantile(0.90) / 1e9
		r.Latency.P99 = h.Quantile(0.99) / 1e9
		r.Latency.P999 = h.Quantile(0.999) / 1e9
		r.Latency.Max = float64(h.Max()) / 1e9
		r.Latency.Mean = h.Mean() / 1e9
	}
	return r
}

// setRcvbuf asks for a receive buffer of n bytes, beyond rmem_max when the
// process may (SO_RCVBUFFORCE needs CAP_NET_ADMIN), and returns what the
// kernel granted (it reports double the request, counting its overhead).
func setRcvbuf(conn *net.UDPConn, n int) (int, error) {
	rc, err := conn.SyscallConn()
	if err != nil {
		return 0, err
	}
	var got int
	var serr error
	err = rc.Control(func(fd uintptr) {
		if n > 0 {
			if unix.SetsockoptInt(int(fd), unix.SOL_SOCKET, unix.SO_RCVBUFFORCE, n) != nil {
				serr = unix.SetsockoptInt(int(fd), unix.SOL_SOCKET, unix.SO_RCVBUF, n)
			}
		}
		if serr == nil {
			got, serr = unix.GetsockoptInt(int(fd), unix.SOL_SOCKET, unix.SO_RCVBUF)
		}
	})
	if err == nil {
		err = serr
	}
	if err != nil {
		return 0, fmt.Errorf("setting the receive buffer to %d bytes: %w", n, err)
	}
	return got, nil
}
