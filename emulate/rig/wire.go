package rig

import (
	"bytes"
	"errors"
	"fmt"
	"strconv"

	"rigwire/profiles"
)

// Layout places a sample's fields in a text datagram as the loop's decode
// section expects them: the outputs at their decode fields, the sequence
// number at decode.sequence (or the first field no output uses), and the
// sample time t_k, in seconds of CLOCK_MONOTONIC with nanosecond digits,
// in the first field still free. A loop without a decode section gets
// "seq,t,y1,…,yp". Fields are split by the decode separator (default ",").
type Layout struct {
	sep     []byte
	nfields int
	seq, t  int
	out     []int
}

// NewLayout checks that the loop's decode section is one the simulated
// rig can write and returns its layout.
func NewLayout(loop *profiles.Loop) (Layout, error) {
	_, _, p, _ := loop.Dims()
	d := loop.Decode
	l := Layout{sep: []byte(","), seq: -1, t: -1}
	switch d.Format {
	case "":
		l.seq, l.t = 0, 1
		for i := 0; i < p; i++ {
			l.out = append(l.out, 2+i)
		}
		l.nfields = 2 + p
		return l, nil
	case "text":
	default:
		return Layout{}, fmt.Errorf("decode.format: the simulated rig writes text datagrams, got %s", d.Format)
	}
	if d.Separator != "" {
		l.sep = []byte(d.Separator)
	}
	if len(d.Outputs) != p {
		return Layout{}, fmt.Errorf("decode.outputs: want %d, got %d", p, len(d.Outputs))
	}
	used := map[int]bool{}
	for i, f := range d.Outputs {
		if used[f.Field] {
			return Layout{}, fmt.Errorf("decode.outputs[%d]: field %d used twice", i, f.Field)
		}
		used[f.Field] = true
		l.out = append(l.out, f.Field)
	}
	free := func() int {
		i := 0
		for used[i] {
			i++
		}
		used[i] = true
		return i
	}
	if d.Sequence != nil {
		if used[d.Sequence.Field] {
			return Layout{}, fmt.Errorf("decode.sequence: field %d is also an output", d.Sequence.Field)
		}
		used[d.Sequence.Field] = true
		l.seq = d.Sequence.Field
	} else {
		l.seq = free()
	}
	if st := d.SampleTime; st != nil {
		// The rig writes t_k in seconds on CLOCK_MONOTONIC, nine decimals.
		if d.TimeUnit != 1e9 {
			return Layout{}, fmt.Errorf("decode.sample_time: the simulated rig writes its sample times in seconds (unit: s)")
		}
		if used[st.Field] {
			return Layout{}, fmt.Errorf("decode.sample_time: field %d is also an output or the sequence", st.Field)
		}
		used[st.Field] = true
		l.t = st.Field
	} else {
		l.t = free()
	}
	for i := range used {
		l.nfields = max(l.nfields, i+1)
	}
	return l, nil
}

// AppendSample appends sample k taken at tNs with outputs y. Fields that
// carry nothing are left empty.
func (l Layout) AppendSample(b []byte, k uint64, tNs int64, y []float64) []byte {
	for i := 0; i < l.nfields; i++ {
		if i > 0 {
			b = append(b, l.sep...)
		}
		switch i {
		case l.seq:
			b = strconv.AppendUint(b, k, 10)
		case l.t:
			b = appendSeconds(b, tNs)
		default:
			for j, f := range l.out {
				if f == i {
					b = strconv.AppendFloat(b, y[j], 'g', -1, 64)
				}
			}
		}
	}
	return b
}

// ParseSample reads a datagram written by AppendSample; y gets the p
// outputs.
func (l Layout) ParseSample(b []byte, y []float64) (k uint64, tNs int64, err error) {
	i := 0
	got := 0
	for field := b; ; i++ {
		var f []byte
		if j := bytes.Index(field, l.sep); j >= 0 {
			f, field = field[:j], field[j+len(l.sep):]
		} else {
			f, field = field, nil
		}
		switch i {
		case l.seq:
			if k, err = strconv.ParseUint(string(f), 10, 64); err != nil {
				return 0, 0, fmt.Errorf("field %d: sequence: %w", i, err)
			}
			got++
		case l.t:
			if tNs, err = parseSeconds(f); err != nil {
				return 0, 0, fmt.Errorf("field %d: sample time: %w", i, err)
			}
			got++
		default:
			for j, o := range l.out {
				if o == i {
					if y[j], err = strconv.ParseFloat(string(f), 64); err != nil {
						return 0, 0, fmt.Errorf("field %d: output %d: %w", i, j+1, err)
					}
					got++
				}
			}
		}
		if field == nil {
			break
		}
	}
	if got != 2+len(l.out) {
		return 0, 0, fmt.Errorf("want %d fields, got %d", l.nfields, i+1)
	}
	return k, tNs, nil
}

// AppendCommand appends the command datagram "k,t_k,u1,…,um" (t_k as in
// samples).
func AppendCommand(b []byte, k uint64, tNs int64, u []float64) []byte {
	b = strconv.AppendUint(b, k, 10)
	b = append(b, ',')
	b = appendSeconds(b, tNs)
	for _, v := range u {
		b = append(b, ',')
		b = strconv.AppendFloat(b, v, 'g', -1, 64)
	}
	return b
}

// ParseCommand reads a command datagram into u (m entries).
func ParseCommand(b []byte, u []float64) (k uint64, tNs int64, err error) {
	fields := bytes.Split(b, []byte(","))
	if len(fields) != 2+len(u) {
		return 0, 0, fmt.Errorf("command: want %d fields, got %d", 2+len(u), len(fields))
	}
	if k, err = strconv.ParseUint(string(fields[0]), 10, 64); err != nil {
		return 0, 0, fmt.Errorf("command: sequence: %w", err)
	}
	if tNs, err = parseSeconds(fields[1]); err != nil {
		return 0, 0, fmt.Errorf("command: sample time: %w", err)
	}
	for i := range u {
		if u[i], err = strconv.ParseFloat(string(fields[2+i]), 64); err != nil {
			return 0, 0, fmt.Errorf("command: u%d: %w", i+1, err)
		}
	}
	return k, tNs, nil
}

// appendSeconds writes ns ≥ 0 as seconds with nine decimals, exactly.
func appendSeconds(b []byte, ns int64) []byte {
	b = strconv.AppendInt(b, ns/1e9, 10)
	b = append(b, '.')
	frac := ns % 1e9
	for d := int64(1e8); d > 0; d /= 10 {
		b = append(b, byte('0'+frac/d%10))
	}
	return b
}

var errSeconds = errors.New("want seconds with up to nine decimals")

// parseSeconds reads what appendSeconds writes (fewer decimals allowed).
func parseSeconds(f []byte) (int64, error) {
	whole, frac, _ := bytes.Cut(f, []byte("."))
	if len(whole) == 0 || len(frac) > 9 {
		return 0, errSeconds
	}
	s, err := strconv.ParseInt(string(whole), 10, 64)
	if err != nil || s < 0 || s > 1<<33 {
		return 0, errSeconds
	}
	ns := int64(0)
	for i := 0; i < 9; i++ {
		ns *= 10
		if i < len(frac) {
			c := frac[i]
			if c < '0' || c > '9' {
				return 0, errSeconds
			}
			ns += int64(c - '0')
		}
	}
	return s*1e9 + ns, nil
}
