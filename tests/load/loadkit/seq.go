package loadkit

// SeqTracker accounts for the sequence numbers a receiver sees.
//
// The definitions follow RFC 4737 (Packet Reordering Metrics), §3: a
// datagram is reordered when its sequence number is lower than NextExp, one
// more than the highest sequence number received before it; a sequence
// number seen a second time is a duplicate and is neither counted as
// received again nor as reordered. Loss is what was sent and never
// received (Lost).
//
// Seen sequence numbers are kept in a bitmap that grows with the highest
// one seen, up to a limit fixed at construction; numbers at or past the
// limit are counted in OutOfRange and otherwise ignored, so memory stays
// bounded whatever arrives.
type SeqTracker struct {
	bits  []uint64
	limit uint64

	Unique     uint64 // distinct sequence numbers received
	Duplicates uint64 // arrivals of a sequence number already received
	Reordered  uint64 // arrivals below NextExp (RFC 4737 §3)
	OutOfRange uint64 // sequence numbers ≥ the limit, ignored
	NextExp    uint64 // one more than the highest sequence number received
}

// NewSeqTracker returns a tracker for sequence numbers below limit.
func NewSeqTracker(limit uint64) *SeqTracker {
	return &SeqTracker{limit: limit}
}

// Add records the arrival of one datagram with sequence number seq.
func (t *SeqTracker) Add(seq uint64) {
	if seq >= t.limit {
		t.OutOfRange++
		return
	}
	w := seq / 64
	if w >= uint64(len(t.bits)) {
		n := max(2*len(t.bits), int(w)+1, 1024)
		n = min(n, int((t.limit+63)/64))
		grown := make([]uint64, n)
		copy(grown, t.bits)
		t.bits = grown
	}
	m := uint64(1) << (seq % 64)
	if t.bits[w]&m != 0 {
		t.Duplicates++
		return
	}
	t.bits[w] |= m
	t.Unique++
	if seq < t.NextExp {
		t.Reordered++
	} else {
		t.NextExp = seq + 1
	}
}

// Lost is the number of datagrams among sent that were never received:
// sent − Unique, or 0 if more distinct ones arrived than the caller says
// were sent.
func (t *SeqTracker) Lost(sent uint64) uint64 {
	if t.Unique >= sent {
		return 0
	}
	return sent - t.Unique
}

// Gaps is the number of sequence numbers below NextExp never received: the
// loss visible to the receiver alone, without the sender's count (it
// misses losses after the highest number received).
func (t *SeqTracker) Gaps() uint64 { return t.NextExp - t.Unique }
