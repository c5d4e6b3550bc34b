package online

// SeqTracker classifies samples by their sequence numbers, to count the
// samples a monitor never saw (gaps) without counting any twice. It
// remembers which of the last SeqWindow numbers below the highest one
// arrived (a sliding bitmap, as anti-replay windows do, RFC 4303 §3.4.3),
// so that:
//
//   - a number above the highest seen counts the numbers skipped as gaps;
//   - a number inside the window not seen before is late (reordered): it
//     takes back one gap and is used;
//   - a number seen before is a duplicate, not used;
//   - a number below the window is stale, not used (it may or may not have
//     been a gap: the gap stays counted);
//   - a jump of more than SeqRestartJump either way is a restart of the
//     sensor's counter: the tracker starts again from it (counted).
//
// Its zero value is ready; memory is fixed.
type SeqTracker struct {
	started bool
	first   uint64 // first number since the last restart
	high    uint64 // highest number seen
	bits    [SeqWindow / 64]uint64
	Counts  SeqCounts
}

// SeqCounts are the tracker's counters.
type SeqCounts struct {
	Gaps, Late, Duplicates, Stale, Restarts int64
}

// SeqClass is what a sequence number turned out to be.
type SeqClass int

const (
	SeqNext      SeqClass = iota // in order (possibly after a gap): use it
	SeqLate                      // reordered, first time seen: use it
	SeqDuplicate                 // seen before: drop it
	SeqStale                     // older than the window: drop it
	SeqRestart                   // the counter jumped: use it, tracking starts again
)

const (
	// SeqWindow is how far below the highest number a late sample is
	// still recognised.
	SeqWindow = 1024
	// SeqRestartJump is the largest jump taken as a gap rather than a
	// restart of the counter.
	SeqRestartJump = 1 << 20
)

func (t *SeqTracker) set(s uint64)      { t.bits[(s/64)%(SeqWindow/64)] |= 1 << (s % 64) }
func (t *SeqTracker) clr(s uint64)      { t.bits[(s/64)%(SeqWindow/64)] &^= 1 << (s % 64) }
func (t *SeqTracker) has(s uint64) bool { return t.bits[(s/64)%(SeqWindow/64)]&(1<<(s%64)) != 0 }

func (t *SeqTracker) restart(s uint64) {
	t.started, t.first, t.high = true, s, s
	t.bits = [SeqWindow / 64]uint64{}
	t.set(s)
}

// Observe classifies sequence number s and updates the counts.
func (t *SeqTracker) Observe(s uint64) SeqClass {
	switch {
	case !t.started:
		t.restart(s)
		return SeqNext
	case s > t.high:
		jump := s - t.high
		if jump > SeqRestartJump {
			t.Counts.Restarts++
			t.restart(s)
			return SeqRestart
		}
		t.Counts.Gaps += int64(jump - 1)
		if jump >= SeqWindow {
			t.bits = [SeqWindow / 64]uint64{}
		} else {
			for v := t.high + 1; v < s; v++ {
				t.clr(v)
			}
		}
		t.clr(s)
		t.set(s)
		t.high = s
		return SeqNext
	case t.high-s > SeqRestartJump:
		t.Counts.Restarts++
		t.restart(s)
		return SeqRestart
	case t.high-s >= SeqWindow || s < t.first:
		t.Counts.Stale++
		return SeqStale
	case t.has(s):
		t.Counts.Duplicates++
		return SeqDuplicate
	default:
		t.set(s)
		t.Counts.Late++
		t.Counts.Gaps--
		return SeqLate
	}
}
