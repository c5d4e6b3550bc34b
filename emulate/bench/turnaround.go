package bench

import (
	"slices"
	"sync"

	"rigwire/estimate/engine"
)

// turnaroundKeep is how many of the latest turnarounds the bench keeps
// for its comparison with the loop's compute law.
const turnaroundKeep = 20000

// turnarounds keeps the latest controller turnarounds the relay measured
// (emulate.Pairing), in a ring filled without allocating.
type turnarounds struct {
	mu   sync.Mutex
	ring [turnaroundKeep]float64
	n    int // measured so far (the ring holds the last min(n, keep))
}

func (t *turnarounds) observe(_ uint64, turn, _ int64) {
	t.mu.Lock()
	t.ring[t.n%turnaroundKeep] = float64(turn) / 1e9
	t.n++
	t.mu.Unlock()
}

// Turnaround compares the turnarounds measured so far (the latest
// turnaroundKeep of them) with the loop's compute law; nil when the loop
// does not let the relay pair commands with samples (no decode.sequence
// or command_decode) or none was measured.
func (b *Bench) Turnaround() *engine.Turnaround {
	if b.turns == nil {
		return nil
	}
	b.turns.mu.Lock()
	n := b.turns.n
	xs := slices.Clone(b.turns.ring[:min(n, turnaroundKeep)])
	b.turns.mu.Unlock()
	return engine.CompareTurnaround(b.Loop, n, xs)
}
