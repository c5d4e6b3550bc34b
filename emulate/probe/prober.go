package probe

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"net"
	"sync"
	"time"

	"rigwire/profiles/laws"
)

// Record is what the prober knows of one probe.
type Record struct {
	Sent      time.Duration // send time on the prober's monotonic clock, since the run started
	RTT       time.Duration // round trip of the first reply
	OneWay    time.Duration // outbound delay from the wall-clock stamps
	Back      time.Duration // return delay, likewise
	Copies    int           // replies received: 0 lost, 1, more: duplicated
	Reordered bool          // the first reply came after a later probe's first reply
}

// Config is one probe run.
type Config struct {
	// Conn is connected to the echo (or to a relay in front of it); Run
	// closes it.
	Conn     *net.UDPConn
	Count    int           // probes to send
	Interval time.Duration // between two probes' send times
	Size     int           // bytes of each probe, at least HeaderLen
	Wait     time.Duration // how long to wait for replies after the last probe
	// Progress, when not nil, gets a progress line each second.
	Progress io.Writer
}

// Run sends Count probes, one every Interval (a late one is sent at once
// and its real send time recorded), matches their replies until Wait
// after the last one, closes Conn and returns the records of the probes
// sent, by sequence number. When ctx ends, sending and the wait stop
// early; the probes sent so far are returned.
func Run(ctx context.Context, c Config) ([]Record, error) {
	if c.Size < HeaderLen || c.Count < 0 || c.Interval < 0 {
		return nil, fmt.Errorf("probe run: want a size ≥ %d bytes, a count ≥ 0 and an interval ≥ 0, got %d, %d, %s", HeaderLen, c.Size, c.Count, c.Interval)
	}
	p := &prober{conn: c.Conn, recs: make([]Record, c.Count), interval: c.Interval, size: c.Size, start: time.Now()}
	var wg sync.WaitGroup
	wg.Add(1)
	go func() { defer wg.Done(); p.receiveLoop() }()
	progressDone := make(chan struct{})
	if c.Progress != nil {
		go func() { p.progressLoop(c.Progress, progressDone) }()
	}
	sent := p.sendLoop(ctx)
	select {
	case <-ctx.Done():
	case <-time.After(c.Wait):
	}
	c.Conn.Close() // ends receiveLoop with net.ErrClosed
	wg.Wait()
	close(progressDone)
	return p.recs[:sent], nil
}

// Lost counts the records without a reply.
func Lost(recs []Record) int {
	n := 0
	for _, r := range recs {
		if r.Copies == 0 {
			n++
		}
	}
	return n
}

// prober sends probes and matches their replies. Its goroutines:
// sendLoop (Run's), receiveLoop (ends when conn closes), progressLoop
// (ends when its channel closes).
type prober struct {
	conn     *net.UDPConn
	interval time.Duration
	size     int
	start    time.Time

	mu      sync.Mutex
	recs    []Record // by sequence number
	sent    int
	replies int
	highest int64 // highest sequence number with a reply; −1 none
}

// sendLoop sends the probes at their times (start + i·interval) and
// returns how many were sent.
func (p *prober) sendLoop(ctx context.Context) int {
	buf := make([]byte, p.size)
	p.mu.Lock()
	p.highest = -1
	p.mu.Unlock()
	for i := range p.recs {
		due := time.Duration(i) * p.interval
		if d := due - time.Since(p.start); d > 0 {
			select {
			case <-ctx.Done():
				return p.count()
			case <-time.After(d):
			}
		} else if ctx.Err() != nil {
			return p.count()
		}
		p.mu.Lock()
		p.recs[i].Sent = time.Since(p.start)
		p.sent = i + 1
		p.mu.Unlock()
		Put(buf, Stamp{Seq: uint64(i), Sent: time.Now().UnixNano()})
		_, _ = p.conn.Write(buf) // a refused send is a lost probe
	}
	return p.count()
}

func (p *prober) count() int {
	p.mu.Lock()
	defer p.mu.Unlock()
	return p.sent
}

// receiveLoop matches replies to probes until the socket is closed.
func (p *prober) receiveLoop() {
	buf := make([]byte, 65536)
	for {
		n, err := p.conn.Read(buf)
		at := time.Since(p.start)
		wall := time.Now().UnixNano()
		if err != nil {
			if errors.Is(err, net.ErrClosed) {
				return
			}
			continue // e.g. a port-unreachable report: keep reading
		}
		st, err := Read(buf[:n])
		if err != nil {
			continue
		}
		p.mu.Lock()
		if st.Seq < uint64(p.sent) {
			r := &p.recs[st.Seq]
			r.Copies++
			if r.Copies == 1 {
				p.replies++
				r.RTT = at - r.Sent
				r.OneWay = time.Duration(st.Echoed - st.Sent)
				r.Back = time.Duration(wall - st.Reply)
				if int64(st.Seq) < p.highest {
					r.Reordered = true
				} else {
					p.highest = int64(st.Seq)
				}
			}
		}
		p.mu.Unlock()
	}
}

// progressSeconds writes the time since the start in the progress line
// with the one seconds formatter: seconds with one decimal ("12.3s"),
// right-aligned in six characters by the line's format.
var progressSeconds = laws.Seconds{Unit: "s", Fixed: true, Digits: 1}

// progressLoop reports on w each second until done closes.
func (p *prober) progressLoop(w io.Writer, done <-chan struct{}) {
	t := time.NewTicker(time.Second)
	defer t.Stop()
	for {
		select {
		case <-done:
			return
		case <-t.C:
			p.mu.Lock()
			sent, replies := p.sent, p.replies
			p.mu.Unlock()
			pending := 100 * float64(sent-replies) / math.Max(1, float64(sent))
			fmt.Fprintf(w, "probe: %6s  %d sent  %d replies  %.2f %% not (yet) answered\n", progressSeconds.Format(time.Since(p.start).Seconds()), sent, replies, pending)
		}
	}
}
