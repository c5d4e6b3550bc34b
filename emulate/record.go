package emulate

import (
	"bufio"
	"io"
	"strconv"
	"sync"

	"github.com/prometheus/client_golang/prometheus"
)

// RecordHeader opens every record file. The format is ours:
//
//	# rigwire relay record v3
//	# times in seconds on the relay's monotonic clock since it started
//	arrival_s,direction,state,decision,delay_s,due_s,release_s,arrival_seq,sample_seq,turnaround_s,sensor_latency_s
//
// then one line per datagram, written when its fate is settled (so lines
// are in order of settlement, not of arrival: sorting a direction's lines
// by arrival_seq, which numbers its datagrams 1, 2, … as they were read,
// gives their arrival order exactly, even for datagrams read in one batch
// at the same arrival_s). decision is one of the
// Outcome constants; state is the direction's channel state at arrival
// (empty for datagrams rejected before any draw); delay_s and due_s are
// empty when no delay was drawn, release_s unless the datagram was
// forwarded. With a pairing (Config.Pairing), sample_seq is the sequence
// number a sensor datagram carries, or the one of the sample a command
// answers, and turnaround_s, on a command paired with its sample, the time
// from that sample's release to the controller to the command's arrival;
// both are empty otherwise; sensor_latency_s, on a sensor datagram with a
// sample time on a clock the relay shares (Pairing.Clock), the time from
// that sample time to its arrival. Times carry nine decimals (nanoseconds).
const RecordHeader = RecordMagic + "3\n" +
	"# times in seconds on the relay's monotonic clock since it started\n" +
	"arrival_s,direction,state,decision,delay_s,due_s,release_s,arrival_seq,sample_seq,turnaround_s,sensor_latency_s\n"

// RecordMagic begins the first line of every version of the record (its
// version number follows): what tells a relay record from another file.
const RecordMagic = "# rigwire relay record v"

// RecordColumns are the record file's column names, in order.
var RecordColumns = []string{"arrival_s", "direction", "state", "decision", "delay_s", "due_s", "release_s", "arrival_seq", "sample_seq", "turnaround_s", "sensor_latency_s"}

type rec struct {
	arrival, due, release int64
	delay                 float64
	dir                   string
	state                 string
	outcome               outcomeID
	drawn                 bool   // delay and due are set
	seq                   uint64 // arrival number in its direction (admit); 0 for a datagram refused before admission (stranger, oversized, no actuator)
	pair                  pairNote
}

// recorder writes records from a bounded ring on a goroutine of its own, so
// that the relay never waits on the disk. When the ring is full the record
// is lost and counted, never queued without bound.
type recorder struct {
	mu     sync.Mutex
	ring   []rec
	head   int // next to write out
	n      int // records in the ring
	closed bool
	wake   chan struct{}
	done   chan struct{}
	lost   prometheus.Counter
	w      *bufio.Writer
	line   []byte
	err    error
}

const recordRing = 1 << 14

func newRecorder(w io.Writer, lost prometheus.Counter) (*recorder, error) {
	r := &recorder{
		ring: make([]rec, recordRing),
		wake: make(chan struct{}, 1),
		done: make(chan struct{}),
		lost: lost,
		w:    bufio.NewWriterSize(w, 1<<16),
		line: make([]byte, 0, 256),
	}
	if _, err := r.w.WriteString(RecordHeader); err != nil {
		return nil, err
	}
	go r.writeLoop()
	return r, nil
}

// add queues one record; it does not block and does not allocate.
func (r *recorder) add(x rec) {
	r.mu.Lock()
	if r.closed || r.n == len(r.ring) {
		r.mu.Unlock()
		r.lost.Inc()
		return
	}
	r.ring[(r.head+r.n)%len(r.ring)] = x
	r.n++
	r.mu.Unlock()
	select {
	case r.wake <- struct{}{}:
	default:
	}
}

// writeLoop formats records until close; it ends after writing what was
// queued before close.
func (r *recorder) writeLoop() {
	defer close(r.done)
	for {
		<-r.wake
		for {
			r.mu.Lock()
			if r.n == 0 {
				closed := r.closed
				r.mu.Unlock()
				if r.err == nil {
					r.err = r.w.Flush()
				}
				if closed {
					return
				}
				break
			}
			x := r.ring[r.head]
			r.head = (r.head + 1) % len(r.ring)
			r.n--
			r.mu.Unlock()
			if r.err == nil {
				r.err = r.write(&x)
			}
		}
	}
}

func (r *recorder) write(x *rec) error {
	b := r.line[:0]
	b = appendSeconds(b, x.arrival)
	b = append(b, ',')
	b = append(b, x.dir...)
	b = append(b, ',')
	b = append(b, x.state...)
	b = append(b, ',')
	b = append(b, outcomeIndex[x.outcome]...)
	b = append(b, ',')
	if x.drawn {
		b = strconv.AppendFloat(b, x.delay, 'f', 9, 64)
	}
	b = append(b, ',')
	if x.drawn {
		b = appendSeconds(b, x.due)
	}
	b = append(b, ',')
	if x.outcome == oForwarded {
		b = appendSeconds(b, x.release)
	}
	b = append(b, ',')
	if x.seq > 0 {
		b = strconv.AppendUint(b, x.seq, 10)
	}
	b = append(b, ',')
	if x.pair.tag > 0 {
		b = strconv.AppendUint(b, x.pair.tag-1, 10)
	}
	b = append(b, ',')
	if x.pair.paired {
		b = appendSeconds(b, x.pair.turn)
	}
	b = append(b, ',')
	if x.pair.hasLat {
		b = appendSeconds(b, x.pair.lat)
	}
	b = append(b, '\n')
	r.line = b
	_, err := r.w.Write(b)
	return err
}

// appendSeconds writes ns nanoseconds as seconds with nine decimals,
// exactly (no float rounding).
func appendSeconds(b []byte, ns int64) []byte {
	if ns < 0 {
		b = append(b, '-')
		ns = -ns
	}
	b = strconv.AppendInt(b, ns/1e9, 10)
	b = append(b, '.')
	frac := ns % 1e9
	for d := int64(1e8); d > 0; d /= 10 {
		b = append(b, byte('0'+frac/d%10))
	}
	return b
}

// close writes out what is queued and returns the first write error.
func (r *recorder) close() error {
	r.mu.Lock()
	r.closed = true
	r.mu.Unlock()
	select {
	case r.wake <- struct{}{}:
	default:
	}
	<-r.done
	return r.err
}
