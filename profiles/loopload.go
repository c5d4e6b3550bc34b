package profiles

import (
	"fmt"
	"math"
	"path/filepath"
	"rigwire/emulate/trip"
	"rigwire/profiles/laws"
	"rigwire/profiles/yamlpos"
	"slices"
	"strings"

	"gonum.org/v1/gonum/mat"
	"gopkg.in/yaml.v3"
)

// LoadLoop reads and validates the loop description at path (the loop
// file of the package doc). A profile given as a path is resolved against
// the loop file's directory. Every error names the file, the line and the
// key path:
//
//	loop.yaml:12: controller.d: want 1×1, got 1×2
func LoadLoop(path string) (*Loop, error) {
	data, err := yamlpos.ReadInputFile(path, "loop file", yamlpos.MaxYAMLBytes)
	if err != nil {
		return nil, err
	}
	l, err := ParseLoop(data, path, filepath.Dir(path))
	if err != nil {
		return nil, err
	}
	l.File = path
	return l, nil
}

// ParseLoop validates a loop description held in memory. file names it in
// messages; dir is the directory that the profile path is resolved
// against.
func ParseLoop(data []byte, file, dir string) (*Loop, error) {
	root, err := yamlpos.Document(file, data)
	if err != nil {
		return nil, err
	}
	return parseLoop(root, dir)
}

// Negative eigenvalues of a noise covariance down to this much of its
// largest entry are taken for rounding in the file (common practice).
const psdTolerance = 1e-12

func parseLoop(root yamlpos.Field, dir string) (*Loop, error) {
	keys, err := root.Mapping("period", "plant", "controller", "setpoint", "compute_delay",
		"profile", "actuator", "timing", "decode", "command_decode", "trip", "reference")
	if err != nil {
		return nil, err
	}
	for _, k := range []string{"period", "plant", "controller", "profile"} {
		if keys[k].IsZero() {
			return nil, missing(root, k)
		}
	}
	l := &Loop{File: root.File}
	if l.Period, err = keys["period"].PositiveDuration(); err != nil {
		return nil, err
	}
	if err := parsePlant(keys["plant"], &l.Plant, l.Period); err != nil {
		return nil, err
	}
	n, m := l.Plant.B.Dims()
	p, _ := l.Plant.C.Dims()
	if err := parseController(keys["controller"], &l.Controller, n, m, p, l.Period); err != nil {
		return nil, err
	}
	l.Setpoint = make([]float64, p)
	if f := keys["setpoint"]; !f.IsNull() {
		v, err := f.Vector()
		if err != nil {
			return nil, err
		}
		if len(v) != p {
			return nil, f.Errorf("want %d numbers (one per output of plant.c), got %d", p, len(v))
		}
		l.Setpoint = v
	}
	if f := keys["reference"]; !f.IsNull() {
		if err := parseReference(f, l, p); err != nil {
			return nil, err
		}
	}
	l.Compute = laws.Constant{Value: 0}
	if f := keys["compute_delay"]; !f.IsNull() {
		c, err := parseCompute(f, dir, l.Period)
		if err != nil {
			return nil, err
		}
		l.Compute = c
	}
	pf := keys["profile"]
	switch {
	case pf.IsNull():
		return nil, pf.Errorf("want a profile file (a path) or an inline profile (a mapping), got %s", pf.Got())
	case pf.Node.Kind == yaml.ScalarNode:
		rel, err := pf.Text()
		if err != nil {
			return nil, err
		}
		path := rel
		if !filepath.IsAbs(path) && dir != "" {
			path = filepath.Join(dir, path)
		}
		prof, err := Load(path)
		if err != nil {
			return nil, pf.Errorf("%v", err) // keeps err reachable (Errorf sets Err)
		}
		l.Profile, l.ProfileFile = prof, path
	default:
		prof, err := ParseField(pf, dir)
		if err != nil {
			return nil, err
		}
		l.Profile = prof
	}
	if f := keys["actuator"]; !f.IsZero() {
		ak, err := f.Mapping("on_loss")
		if err != nil {
			return nil, err
		}
		if ol := ak["on_loss"]; !ol.IsNull() {
			s, err := ol.Text()
			if err != nil {
				return nil, err
			}
			switch s {
			case "hold":
				l.Actuator.OnLoss = HoldLast
			case "zero":
				l.Actuator.OnLoss = ZeroUnlessFresh
			default:
				return nil, ol.Errorf("want hold or zero, got %s", ol.Got())
			}
		}
	}
	if f := keys["timing"]; !f.IsZero() {
		if err := parseTiming(f, l); err != nil {
			return nil, err
		}
	}
	if f := keys["decode"]; !f.IsZero() {
		if err := parseDecode(f, &l.Decode, p); err != nil {
			return nil, err
		}
	}
	if l.Reference.Sinusoidal() && l.Decode.Format != "" && l.Decode.Sequence == nil {
		return nil, keys["decode"].Errorf("want a sequence field with a sinusoidal reference: the reference's time is the sample's sequence number times the period (key reference)")
	}
	if f := keys["command_decode"]; !f.IsZero() {
		if err := parseCommandDecode(f, &l.CommandDecode); err != nil {
			return nil, err
		}
	}
	if f := keys["trip"]; !f.IsNull() {
		t, err := trip.Parse(f, l.Period)
		if err != nil {
			return nil, err
		}
		l.Trip = t
	}
	return l, nil
}

// missing is the error for a required key that is absent, at the line of
// the mapping that should hold it.
func missing(parent yamlpos.Field, key string) *yamlpos.Error {
	line := parent.Line()
	return &yamlpos.Error{File: parent.File, Line: line, Key: parent.Key(key), Msg: "missing (required)"}
}

func shape(m *mat.Dense) string {
	r, c := m.Dims()
	return fmt.Sprintf("%d×%d", r, c)
}

func parsePlant(f yamlpos.Field, pl *Plant, h float64) error {
	keys, err := f.Mapping("a", "b", "c", "process_noise", "sensor_noise", "transfer_function", "input_noise", "discrete")
	if err != nil {
		return err
	}
	forms := 0
	for _, k := range []string{"a", "transfer_function", "discrete"} {
		if !keys[k].IsZero() {
			forms++
		}
	}
	if forms > 1 {
		return f.Errorf("want one form of the plant: a, b, c (continuous state space), transfer_function or discrete, got %d of them", forms)
	}
	switch {
	case !keys["transfer_function"].IsZero():
		if err := parsePlantTF(keys, pl); err != nil {
			return err
		}
	case !keys["discrete"].IsZero():
		if err := parsePlantDiscrete(keys, pl, h); err != nil {
			return err
		}
	default:
		if !keys["input_noise"].IsZero() {
			return keys["input_noise"].Errorf("only with transfer_function (a state-space plant gives process_noise)")
		}
		for _, k := range []string{"a", "b", "c"} {
			if keys[k].IsZero() {
				return missing(f, k)
			}
		}
		if pl.A, err = keys["a"].Dense(-1, -1); err != nil {
			return err
		}
		n, nn := pl.A.Dims()
		if n != nn {
			return keys["a"].Errorf("want a square matrix, got %s", shape(pl.A))
		}
		if pl.B, err = keys["b"].Dense(-1, -1); err != nil {
			return err
		}
		if r, _ := pl.B.Dims(); r != n {
			return keys["b"].Errorf("want %d rows (plant.a is %d×%d), got %s", n, n, n, shape(pl.B))
		}
		if pl.C, err = keys["c"].Dense(-1, -1); err != nil {
			return err
		}
		if _, c := pl.C.Dims(); c != n {
			return keys["c"].Errorf("want %d columns (plant.a is %d×%d), got %s", n, n, n, shape(pl.C))
		}
		if pl.W, err = covariance(keys["process_noise"], n); err != nil {
			return err
		}
	}
	p, _ := pl.C.Dims()
	if pl.V, err = covariance(keys["sensor_noise"], p); err != nil {
		return err
	}
	return nil
}

// parsePlantTF reads a plant given as one continuous transfer function
// per output from its single input: each is realised in controllable
// canonical form (tfToSS) and the realisations are stacked, sharing the
// input. A strictly proper function is required (the sensor samples
// y = C x, with no direct path from u). The noise is input_noise, an
// intensity at the input: W = B q Bᵀ.
func parsePlantTF(keys map[string]yamlpos.Field, pl *Plant) error {
	f := keys["transfer_function"]
	if !keys["process_noise"].IsZero() {
		return keys["process_noise"].Errorf("not with transfer_function (its states are a realisation of ours): give input_noise, an intensity at the plant's input")
	}
	items, err := f.Seq()
	if err != nil || len(items) == 0 {
		return f.Errorf("want a list of {num, den}, one per output, got %s", f.Got())
	}
	var as, bs, cs []*mat.Dense
	n := 0
	for _, it := range items {
		num, den, err := parseTF(it)
		if err != nil {
			return err
		}
		a, b, c, d, err := tfToSS(num, den)
		if err != nil {
			return it.Errorf("%v", err)
		}
		if a == nil || d != 0 {
			return it.Errorf("want a strictly proper transfer function (numerator's degree below the denominator's): the sensor samples y = C x, with no direct path from the input")
		}
		as, bs, cs = append(as, a), append(bs, b), append(cs, c)
		r, _ := a.Dims()
		n += r
	}
	pl.A, pl.B, pl.C = mat.NewDense(n, n, nil), mat.NewDense(n, 1, nil), mat.NewDense(len(items), n, nil)
	off := 0
	for i := range as {
		r, _ := as[i].Dims()
		pl.A.Slice(off, off+r, off, off+r).(*mat.Dense).Copy(as[i])
		pl.B.Slice(off, off+r, 0, 1).(*mat.Dense).Copy(bs[i])
		pl.C.Slice(i, i+1, off, off+r).(*mat.Dense).Copy(cs[i])
		off += r
	}
	q := 0.0
	if g := keys["input_noise"]; !g.IsNull() {
		if q, err = g.FloatIn(0, math.Inf(1)); err != nil {
			return err
		}
	}
	pl.W = mat.NewDense(n, n, nil)
	pl.W.Mul(pl.B, pl.B.T())
	pl.W.Scale(q, pl.W)
	return nil
}

// parseTF reads {num, den}: polynomial coefficients, highest power first.
func parseTF(f yamlpos.Field) (num, den []float64, err error) {
	keys, err := f.Mapping("num", "den")
	if err != nil {
		return nil, nil, err
	}
	for _, k := range []string{"num", "den"} {
		if keys[k].IsZero() {
			return nil, nil, missing(f, k)
		}
	}
	if num, err = keys["num"].Vector(); err != nil {
		return nil, nil, err
	}
	if den, err = keys["den"].Vector(); err != nil {
		return nil, nil, err
	}
	if len(num) == 0 || len(den) == 0 || len(num) > 21 || len(den) > 21 {
		return nil, nil, f.Errorf("want 1 to 21 coefficients in num and den (degree at most 20), got %d and %d", len(num), len(den))
	}
	if d := trimPoly(den); d[0] == 0 {
		return nil, nil, keys["den"].Errorf("want a denominator that is not zero")
	}
	return num, den, nil
}

// parsePlantDiscrete reads a plant given at the loop's period, x' = Φ x +
// Γ u (+ w, E[w wᵀ] = process_noise per period), y = C x + v. The
// prediction needs the plant between samples (a command lands mid-period),
// so it is turned into the continuous plant that samples to it: the
// principal logarithm of [[Φ, Γ], [0, I]] (continuousFromDiscrete), and
// the noise intensity whose sampling is the given covariance.
func parsePlantDiscrete(keys map[string]yamlpos.Field, pl *Plant, h float64) error {
	f := keys["discrete"]
	if !keys["input_noise"].IsZero() {
		return keys["input_noise"].Errorf("only with transfer_function (a discrete plant gives process_noise, per period)")
	}
	dk, err := f.Mapping("a", "b", "c")
	if err != nil {
		return err
	}
	for _, k := range []string{"a", "b", "c"} {
		if dk[k].IsZero() {
			return missing(f, k)
		}
	}
	phi, err := dk["a"].Dense(-1, -1)
	if err != nil {
		return err
	}
	n, nn := phi.Dims()
	if n != nn {
		return dk["a"].Errorf("want a square matrix, got %s", shape(phi))
	}
	gam, err := dk["b"].Dense(n, -1)
	if err != nil {
		return err
	}
	if pl.C, err = dk["c"].Dense(-1, n); err != nil {
		return err
	}
	if pl.A, pl.B, err = continuousFromDiscrete(phi, gam, h); err != nil {
		return f.Errorf("%v", err)
	}
	wd, err := covariance(keys["process_noise"], n)
	if err != nil {
		return err
	}
	pl.W = mat.NewDense(n, n, nil)
	if !mat.Equal(wd, pl.W) {
		if pl.W, err = noiseFromDiscrete(pl.A, wd, h); err != nil {
			return keys["process_noise"].Errorf("%v", err)
		}
		var eig mat.EigenSym
		scale := mat.Norm(pl.W, math.Inf(1))
		if eig.Factorize(mat.NewSymDense(n, pl.W.RawMatrix().Data), false) {
			if v := eig.Values(nil); v[0] < -1e-9*scale {
				return keys["process_noise"].Errorf("this covariance per period is not the sampling of a white noise through the plant (the continuous intensity would have the eigenvalue %g < 0): give a covariance the plant's own dynamics can produce", v[0])
			}
		}
	}
	return nil
}

// covariance reads an n×n symmetric positive semidefinite matrix; absent
// means zeros.
func covariance(f yamlpos.Field, n int) (*mat.Dense, error) {
	if f.IsNull() {
		return mat.NewDense(n, n, nil), nil
	}
	m, err := f.Dense(n, n)
	if err != nil {
		return nil, err
	}
	scale := 0.0
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			scale = math.Max(scale, math.Abs(m.At(i, j)))
			if i < j && m.At(i, j) != m.At(j, i) {
				return nil, f.Errorf("want a symmetric matrix, got [%d][%d] = %g but [%d][%d] = %g",
					i, j, m.At(i, j), j, i, m.At(j, i))
			}
		}
	}
	for i := 0; i < n; i++ {
		if m.At(i, i) < 0 {
			return nil, f.Errorf("want a covariance (positive semidefinite), got a negative variance [%d][%d] = %g", i, i, m.At(i, i))
		}
	}
	var eig mat.EigenSym
	if !eig.Factorize(mat.NewSymDense(n, m.RawMatrix().Data), false) {
		return nil, f.Errorf("eigenvalues did not converge")
	}
	if v := eig.Values(nil); len(v) > 0 && v[0] < -psdTolerance*scale {
		return nil, f.Errorf("want a covariance (positive semidefinite), got an eigenvalue %g", v[0])
	}
	return m, nil
}

func parseController(f yamlpos.Field, c *Controller, n, m, p int, h float64) error {
	keys, err := f.Mapping("a", "b", "c", "d", "pid", "transfer_function")
	if err != nil {
		return err
	}
	has := func(k string) bool { return !keys[k].IsNull() }
	if has("pid") || has("transfer_function") {
		return parseControllerForm(f, keys, c, m, p, h)
	}
	dynamic := has("a") || has("b") || has("c")
	if dynamic {
		for _, k := range []string{"a", "b", "c"} {
			if !has(k) {
				return f.Errorf("want a, b and c together (a dynamic controller), got no %s", k)
			}
		}
		if c.A, err = keys["a"].Dense(-1, -1); err != nil {
			return err
		}
		nc, ncc := c.A.Dims()
		if nc != ncc {
			return keys["a"].Errorf("want a square matrix, got %s", shape(c.A))
		}
		if c.B, err = keys["b"].Dense(nc, p); err != nil {
			return err
		}
		if c.C, err = keys["c"].Dense(m, nc); err != nil {
			return err
		}
	} else if !has("d") {
		return f.Errorf("want d (static gain) or a, b, c and d, got neither")
	}
	if has("d") {
		if c.D, err = keys["d"].Dense(m, p); err != nil {
			return err
		}
	} else {
		c.D = mat.NewDense(m, p, nil)
	}
	return nil
}

// parseTiming reads the loop's timing policy (key timing; estimate/model.md
// §13): two horizons in whole periods, the command's no shorter than the
// sample's, and more than one period only for a holding actuator.
func parseTiming(f yamlpos.Field, l *Loop) error {
	keys, err := f.Mapping("sample_horizon", "command_horizon")
	if err != nil {
		return err
	}
	horizon := func(k string) (int, error) {
		g := keys[k]
		if g.IsNull() {
			return 1, nil
		}
		n, err := g.Int()
		if err != nil {
			return 0, g.Errorf("want a whole number of periods from 1 to %d, got %s", MaxHorizon, g.Got())
		}
		if n < 1 || n > MaxHorizon {
			return 0, g.Errorf("want a whole number of periods from 1 to %d, got %s", MaxHorizon, g.Got())
		}
		return n, nil
	}
	ns, err := horizon("sample_horizon")
	if err != nil {
		return err
	}
	na, err := horizon("command_horizon")
	if err != nil {
		return err
	}
	if na < ns {
		g := keys["command_horizon"]
		if g.IsNull() {
			g = f
		}
		return g.Errorf("want a command horizon of at least the sample horizon (%d periods): a command is never younger than the sample it answers, got %d", ns, na)
	}
	if na > 1 && l.Actuator.OnLoss == ZeroUnlessFresh {
		return keys["command_horizon"].Errorf("want 1 with actuator.on_loss: zero (that actuator drops every command at the end of its own period), got %d", na)
	}
	l.Timing = Timing{SampleHorizon: ns, CommandHorizon: na}
	return nil
}

// parseCompute reads compute_delay: a duration (a constant, as it always
// was), any delay law of the profile format, or the path of a rig timing
// file (a .yaml file holding compute_delay, as monitor calibrate writes
// it). Its lowest value must be below the period; a law that reaches
// beyond it makes those commands late.
func parseCompute(f yamlpos.Field, dir string, period float64) (laws.Delay, error) {
	if f.Node != nil && f.Node.Kind == yaml.ScalarNode && IsTimingPath(f.Node.Value) {
		path := f.Node.Value
		if !filepath.IsAbs(path) && dir != "" {
			path = filepath.Join(dir, path)
		}
		d, err := LoadTiming(path, period)
		if err != nil {
			return nil, f.Errorf("%v", err)
		}
		return d, nil
	}
	if f.Node != nil && f.Node.Kind == yaml.ScalarNode {
		c, err := f.DurationIn(0, math.Inf(1))
		if err != nil {
			return nil, err
		}
		if c >= period {
			return nil, f.Errorf("want a duration below the period (%s), got %s", laws.FormatSeconds(period), f.Got())
		}
		return laws.Constant{Value: c}, nil
	}
	d, err := ParseDelay(f, dir)
	if err != nil {
		return nil, err
	}
	if lo, _ := d.Support(); lo >= period {
		return nil, f.Errorf("want a law whose lowest value is below the period (%s), got %s, lowest %s", laws.FormatSeconds(period), laws.Describe(d), laws.FormatSeconds(lo))
	}
	return d, nil
}

// IsTimingPath says whether a compute_delay value names a rig timing file
// rather than a duration: it ends in .yaml or .yml.
func IsTimingPath(s string) bool {
	return strings.HasSuffix(s, ".yaml") || strings.HasSuffix(s, ".yml")
}

// LoadTiming reads a rig timing file: one key, compute_delay, a duration
// or a delay law (profiles/formats.md, the rig timing file), as monitor
// calibrate writes it. The law's lowest value must be below period.
func LoadTiming(path string, period float64) (laws.Delay, error) {
	data, err := yamlpos.ReadInputFile(path, "rig timing file", yamlpos.MaxYAMLBytes)
	if err != nil {
		return nil, err
	}
	root, err := yamlpos.Document(path, data)
	if err != nil {
		return nil, err
	}
	keys, err := root.Mapping("compute_delay")
	if err != nil {
		return nil, err
	}
	f, ok := keys["compute_delay"]
	if !ok || f.IsNull() {
		return nil, missing(root, "compute_delay")
	}
	if f.Node.Kind == yaml.ScalarNode && IsTimingPath(f.Node.Value) {
		return nil, f.Errorf("want a duration or a delay law, got another file %s", f.Got())
	}
	return parseCompute(f, filepath.Dir(path), period)
}

// parseControllerForm reads a controller given as PID gains or as a
// discrete transfer function (single input, single output), realised as
// the state space the prediction uses.
func parseControllerForm(f yamlpos.Field, keys map[string]yamlpos.Field, c *Controller, m, p int, h float64) error {
	for _, k := range []string{"a", "b", "c", "d"} {
		if !keys[k].IsNull() {
			return keys[k].Errorf("not with pid or transfer_function: give one form of the controller")
		}
	}
	if !keys["pid"].IsNull() && !keys["transfer_function"].IsNull() {
		return f.Errorf("want pid or transfer_function, got both")
	}
	if m != 1 || p != 1 {
		return f.Errorf("want a plant with one input and one output for pid or transfer_function, got %d inputs and %d outputs (give a, b, c, d)", m, p)
	}
	var a, b, cc, d *mat.Dense
	if g := keys["pid"]; !g.IsNull() {
		pid, err := parsePID(g)
		if err != nil {
			return err
		}
		if a, b, cc, d, err = pid.Discrete(h); err != nil {
			return g.Errorf("%v", err)
		}
		c.PID = &pid
	} else {
		g := keys["transfer_function"]
		num, den, err := parseTF(g)
		if err != nil {
			return err
		}
		var dv float64
		if a, b, cc, dv, err = tfToSS(num, den); err != nil {
			return g.Errorf("%v (a controller computes its command from the samples so far)", err)
		}
		d = mat.NewDense(1, 1, []float64{dv})
	}
	c.A, c.B, c.C, c.D = a, b, cc, d
	return nil
}

// parsePID reads controller.pid.
func parsePID(f yamlpos.Field) (PID, error) {
	keys, err := f.Mapping("kp", "ki", "kd", "filter", "method")
	if err != nil {
		return PID{}, err
	}
	var p PID
	for k, dst := range map[string]*float64{"kp": &p.Kp, "ki": &p.Ki, "kd": &p.Kd} {
		if g := keys[k]; !g.IsNull() {
			if *dst, err = g.Float(); err != nil {
				return p, err
			}
		}
	}
	if g := keys["filter"]; !g.IsNull() {
		if p.Filter, err = g.DurationIn(0, math.Inf(1)); err != nil {
			return p, err
		}
	}
	if keys["method"].IsZero() {
		return p, missing(f, "method")
	}
	if p.Method, err = keys["method"].Text(); err != nil {
		return p, err
	}
	if !slices.Contains(PIDMethods, p.Method) {
		return p, keys["method"].Errorf("want one of %s, got %s", strings.Join(PIDMethods, ", "), keys["method"].Got())
	}
	if p.Kp == 0 && p.Ki == 0 && p.Kd == 0 {
		return p, f.Errorf("want at least one of kp, ki, kd not zero")
	}
	return p, nil
}
