package tests

// profiles/formats.md against the loaders. The key lists are read from the
// loaders' own source: every call of yamlpos.Field.Mapping (the one way a
// YAML file's keys are accepted) in every loader, wherever it sits
// (profiles/, emulate/trip/rule.go, emulate/links/file.go,
// deploy/lab/config.go), the delay kinds' table (delayKinds in
// profiles/delayparse.go) and the trace's metadata switch; the CSV
// columns from the exported lists (trace.TraceColumns,
// emulate.RecordColumns). Each key table of the reference is marked with
// an HTML comment, <!-- keys: ID -->, and each Mapping call is tied to one
// ID below, so that a key a loader accepts and the reference does not list,
// a key the reference lists and no loader accepts, and a Mapping call in a
// function the table does not know all fail. The complete examples of the
// reference are loaded by the loaders too.

import (
	"go/ast"
	"go/parser"
	"go/token"
	"os"
	"path"
	"path/filepath"
	"regexp"
	"slices"
	"sort"
	"strconv"
	"strings"
	"testing"

	"rigwire/deploy/lab"
	"rigwire/emulate"
	"rigwire/estimate"
	"rigwire/estimate/report"
	"rigwire/profiles"
	"rigwire/profiles/trace"
)

const formatsDoc = "../profiles/formats.md"

// mappingSections ties each Mapping call, named by its file, its function
// and its first key ("..." when its keys are computed), to the key table
// of the reference that documents it. "" marks calls whose keys are not
// fixed names: they are checked another way (see the test).
var mappingSections = map[string]string{
	"profiles/load.go parseProfile name":                    "profile",
	"profiles/load.go parseChannel loss":                    "profile.direction",
	"profiles/load.go parseStates name":                     "profile.state",
	"profiles/load.go parseStates ...":                      "", // next: the state names of the file
	"profiles/tracechannel.go parseTraceChannel file":       "profile.trace",
	"profiles/delayparse.go parseDelayExtra ...":            "", // the delay kinds' table
	"profiles/loopload.go parseLoop period":                 "loop",
	"profiles/loopload.go parseLoop on_loss":                "loop.actuator",
	"profiles/reference.go parseReference kind":             "loop.reference",
	"profiles/loopload.go parseTiming sample_horizon":       "loop.timing",
	"profiles/loopload.go LoadTiming compute_delay":         "timing",
	"profiles/loopload.go parsePlant a":                     "loop.plant",
	"profiles/loopload.go parseTF num":                      "loop.plant.transfer_function",
	"profiles/loopload.go parsePlantDiscrete a":             "loop.plant.discrete",
	"profiles/loopload.go parsePID kp":                      "loop.controller.pid",
	"profiles/loopload.go parseController a":                "loop.controller",
	"profiles/loopdecodeparse.go parseDecode format":        "loop.decode",
	"profiles/loopdecodeparse.go parseSampleTime field":     "loop.decode.sample_time",
	"profiles/loopdecodeparse.go parseCommandDecode format": "loop.command_decode",
	"profiles/loopdecodeparse.go parseDecodeField field":    "loop.decode.text",
	"profiles/loopdecodeparse.go parseDecodeField pointer":  "loop.decode.json",
	"profiles/loopdecodeparse.go parseDecodeField offset":   "loop.decode.binary",
	"emulate/trip/rule.go Parse max_abs_error":              "loop.trip",
	"profiles/scenario.go parseScenario name":               "scenario",
	"profiles/scenario.go parsePhase name":                  "scenario.phase",
	"profiles/scenario.go parseCheck tolerance":             "scenario.check",
	"profiles/scenario.go parseRampEnds from":               "scenario.ramp",
	"emulate/links/file.go Parse metrics":                   "links",
	"emulate/links/file.go parseLink name":                  "links.link",
	"deploy/lab/config.go Parse namespaces":                 "lab",
	"deploy/lab/config.go Parse a":                          "lab.link",
}

// sectionOf is the heading of the reference's part where each table ID
// must sit (its "## " heading).
var sectionOf = map[string]string{
	"profile":   "## The network profile",
	"loop":      "## The loop file",
	"scenario":  "## The scenario file",
	"timing":    "## The rig timing file",
	"links":     "## The links file",
	"lab":       "## The lab topology file",
	"trace":     "## The probe trace (CSV)",
	"record":    "## The relay's record (CSV)",
	"frequency": "## The frequency response (CSV, JSON)",
	"gainmap":   "## The gain map (CSV)",
}

// docTable is one marked table of the reference.
type docTable struct {
	section string     // the "## " heading it sits under
	rows    [][]string // cells of each body row
}

var (
	tableMarker = regexp.MustCompile(`^<!-- (keys|kinds): ([a-z._]+) -->$`)
	backticked  = regexp.MustCompile("`([^`]+)`")
)

// readDocTables returns the reference's marked tables by kind and ID.
func readDocTables(t *testing.T) (keys, kinds map[string]docTable, text string) {
	t.Helper()
	data, err := os.ReadFile(formatsDoc)
	if err != nil {
		t.Fatal(err)
	}
	keys, kinds = map[string]docTable{}, map[string]docTable{}
	lines := strings.Split(string(data), "\n")
	section := ""
	for i := 0; i < len(lines); i++ {
		if strings.HasPrefix(lines[i], "## ") {
			section = lines[i]
		}
		m := tableMarker.FindStringSubmatch(lines[i])
		if m == nil {
			continue
		}
		tab := docTable{section: section}
		j := i + 1
		for ; j < len(lines) && strings.HasPrefix(lines[j], "|"); j++ {
			if j < i+3 { // the header and the separator
				continue
			}
			cells := strings.Split(strings.Trim(strings.ReplaceAll(lines[j], `\|`, "¦"), "|"), "|")
			for c := range cells {
				cells[c] = strings.TrimSpace(cells[c])
			}
			tab.rows = append(tab.rows, cells)
		}
		if len(tab.rows) == 0 {
			t.Fatalf("%s:%d: marker %s %s: want a table right after it", formatsDoc, i+1, m[1], m[2])
		}
		dst := keys
		if m[1] == "kinds" {
			dst = kinds
		}
		if _, dup := dst[m[2]]; dup {
			t.Fatalf("%s:%d: marker %s %s given twice", formatsDoc, i+1, m[1], m[2])
		}
		dst[m[2]] = tab
		i = j - 1
	}
	return keys, kinds, string(data)
}

// firstKey is the backticked name that opens a row's first cell.
func firstKey(t *testing.T, id string, row []string) string {
	m := backticked.FindStringSubmatch(row[0])
	if m == nil {
		t.Fatalf("%s: table %s: row %q: want the key in backticks in its first cell", formatsDoc, id, strings.Join(row, " | "))
	}
	return m[1]
}

// docKeys returns the keys of table id, checking that it sits in the
// right part of the reference.
func docKeys(t *testing.T, tables map[string]docTable, id string) []string {
	t.Helper()
	tab, ok := tables[id]
	if !ok {
		t.Fatalf("%s: no table marked <!-- keys: %s -->", formatsDoc, id)
	}
	file, _, _ := strings.Cut(id, ".")
	if want := sectionOf[file]; tab.section != want {
		t.Errorf("%s: table %s sits under %q, want under %q", formatsDoc, id, tab.section, want)
	}
	var out []string
	for _, r := range tab.rows {
		out = append(out, firstKey(t, id, r))
	}
	return out
}

// mappingCall is one call of Field.Mapping in a loader's source.
type mappingCall struct {
	where string   // "file func firstkey"
	pos   string   // file:line
	keys  []string // nil when computed
}

// goConsts are identifiers the loaders pass to Mapping, by value.
var goConsts = map[string]string{
	"SensorToController":   profiles.SensorToController,
	"ControllerToActuator": profiles.ControllerToActuator,
}

func parseGo(t *testing.T, fset *token.FileSet, path string) *ast.File {
	t.Helper()
	f, err := parser.ParseFile(fset, filepath.Join("..", path), nil, 0)
	if err != nil {
		t.Fatal(err)
	}
	return f
}

// loaderSources are the Go files that read YAML files with Mapping: every
// non-test Go file of the repository outside tests/ and the YAML reader
// itself that calls it, wherever the floor plan puts it.
func loaderSources(t *testing.T) []string {
	t.Helper()
	var out []string
	for _, rel := range goFiles(t) {
		if strings.HasSuffix(rel, "_test.go") || strings.HasPrefix(rel, "tests/") || strings.HasPrefix(rel, "profiles/yamlpos/") {
			continue
		}
		b, err := os.ReadFile(filepath.Join("..", rel))
		if err != nil {
			t.Fatal(err)
		}
		if strings.Contains(string(b), ".Mapping(") {
			out = append(out, rel)
		}
	}
	return out
}

func mappingCalls(t *testing.T) []mappingCall {
	t.Helper()
	fset := token.NewFileSet()
	var out []mappingCall
	for _, path := range loaderSources(t) {
		f := parseGo(t, fset, path)
		for _, d := range f.Decls {
			fn, ok := d.(*ast.FuncDecl)
			if !ok || fn.Body == nil {
				continue
			}
			ast.Inspect(fn.Body, func(n ast.Node) bool {
				call, ok := n.(*ast.CallExpr)
				if !ok {
					return true
				}
				sel, ok := call.Fun.(*ast.SelectorExpr)
				if !ok || sel.Sel.Name != "Mapping" {
					return true
				}
				c := mappingCall{pos: fset.Position(call.Pos()).String()}
				if call.Ellipsis.IsValid() {
					c.where = path + " " + fn.Name.Name + " ..."
					out = append(out, c)
					return true
				}
				for _, a := range call.Args {
					switch a := a.(type) {
					case *ast.BasicLit:
						s, err := strconv.Unquote(a.Value)
						if err != nil {
							t.Fatalf("%s: %v", c.pos, err)
						}
						c.keys = append(c.keys, s)
					case *ast.Ident:
						v, ok := goConsts[a.Name]
						if !ok {
							t.Fatalf("%s: Mapping key %s: not a literal nor a known constant; add it to goConsts", c.pos, a.Name)
						}
						c.keys = append(c.keys, v)
					default:
						t.Fatalf("%s: Mapping key of an unknown form; extend the test", c.pos)
					}
				}
				if len(c.keys) == 0 {
					t.Fatalf("%s: Mapping without keys", c.pos)
				}
				c.where = path + " " + fn.Name.Name + " " + c.keys[0]
				out = append(out, c)
				return true
			})
		}
	}
	return out
}

// delayKindsSource reads the delay kinds' table from delayparse.go: each
// kind's keys and whether it takes shift; and the extra keys a law's
// mapping may hold (parseDelayExtra's literal arguments: a part's weight).
func delayKindsSource(t *testing.T) (kinds map[string][]string, shift map[string]bool, extra []string) {
	t.Helper()
	fset := token.NewFileSet()
	f := parseGo(t, fset, "profiles/delayparse.go")
	kinds, shift = map[string][]string{}, map[string]bool{}
	ast.Inspect(f, func(n ast.Node) bool {
		switch n := n.(type) {
		case *ast.AssignStmt:
			id, ok := n.Lhs[0].(*ast.Ident)
			if !ok || id.Name != "delayKinds" {
				return true
			}
			lit, ok := n.Rhs[0].(*ast.CompositeLit)
			if !ok {
				t.Fatal("delayparse.go: delayKinds: want a map literal")
			}
			for _, e := range lit.Elts {
				kv := e.(*ast.KeyValueExpr)
				name, _ := strconv.Unquote(kv.Key.(*ast.BasicLit).Value)
				kinds[name] = []string{}
				for _, fe := range kv.Value.(*ast.CompositeLit).Elts {
					fkv := fe.(*ast.KeyValueExpr)
					switch fkv.Key.(*ast.Ident).Name {
					case "keys":
						for _, k := range fkv.Value.(*ast.CompositeLit).Elts {
							s, _ := strconv.Unquote(k.(*ast.BasicLit).Value)
							kinds[name] = append(kinds[name], s)
						}
					case "shift":
						shift[name] = fkv.Value.(*ast.Ident).Name == "true"
					}
				}
			}
		case *ast.CallExpr:
			if id, ok := n.Fun.(*ast.Ident); ok && id.Name == "parseDelayExtra" && len(n.Args) > 3 {
				for _, a := range n.Args[3:] {
					if b, ok := a.(*ast.BasicLit); ok {
						s, _ := strconv.Unquote(b.Value)
						extra = append(extra, s)
					}
				}
			}
		}
		return true
	})
	if len(kinds) == 0 {
		t.Fatal("delayparse.go: delayKinds not found")
	}
	if got, want := sortedKeys(kinds), profiles.DelayKinds(); !slices.Equal(got, want) {
		t.Fatalf("delayparse.go: read kinds %v from the source, profiles.DelayKinds() is %v", got, want)
	}
	return kinds, shift, extra
}

// traceMetaKeys reads the metadata keys that (*Trace).meta interprets.
func traceMetaKeys(t *testing.T) []string {
	t.Helper()
	fset := token.NewFileSet()
	f := parseGo(t, fset, "profiles/trace/trace.go")
	var out []string
	for _, d := range f.Decls {
		fn, ok := d.(*ast.FuncDecl)
		if !ok || fn.Name.Name != "meta" {
			continue
		}
		ast.Inspect(fn.Body, func(n ast.Node) bool {
			if cc, ok := n.(*ast.CaseClause); ok {
				for _, e := range cc.List {
					if b, ok := e.(*ast.BasicLit); ok {
						s, _ := strconv.Unquote(b.Value)
						out = append(out, s)
					}
				}
			}
			return true
		})
	}
	if len(out) == 0 {
		t.Fatal("trace.go: the metadata switch of (*Trace).meta not found")
	}
	return out
}

func sortedKeys[V any](m map[string]V) []string {
	out := make([]string, 0, len(m))
	for k := range m {
		out = append(out, k)
	}
	sort.Strings(out)
	return out
}

// sameKeys reports the keys accepted and not documented, and documented
// and not accepted.
func sameKeys(t *testing.T, id string, accepted, documented []string) {
	t.Helper()
	for _, k := range accepted {
		if !slices.Contains(documented, k) {
			t.Errorf("%s: table %s: key %q is accepted by the loader but not listed", formatsDoc, id, k)
		}
	}
	for _, k := range documented {
		if !slices.Contains(accepted, k) {
			t.Errorf("%s: table %s: key %q is listed but no loader accepts it there", formatsDoc, id, k)
		}
	}
	seen := map[string]bool{}
	for _, k := range documented {
		if seen[k] {
			t.Errorf("%s: table %s: key %q listed twice", formatsDoc, id, k)
		}
		seen[k] = true
	}
}

// TestFormatsDocCoversLoaderKeys checks every key table of profiles/formats.md
// against the keys the loaders accept, both ways.
func TestFormatsDocCoversLoaderKeys(t *testing.T) {
	keys, kinds, _ := readDocTables(t)
	accepted := map[string][]string{} // table ID → keys the loaders accept there
	used := map[string]bool{}
	for _, c := range mappingCalls(t) {
		id, ok := mappingSections[c.where]
		if !ok {
			t.Errorf("%s: a Mapping call (%s) that no table of %s is tied to: add it to mappingSections and document its keys", c.pos, c.where, formatsDoc)
			continue
		}
		used[c.where] = true
		if id == "" {
			continue
		}
		for _, k := range c.keys {
			if !slices.Contains(accepted[id], k) {
				accepted[id] = append(accepted[id], k)
			}
		}
	}
	for w := range mappingSections {
		if !used[w] {
			t.Errorf("mappingSections: %q matches no Mapping call in the sources any more", w)
		}
	}

	// The delay laws: every kind's keys, kind, shift and the extras.
	kindKeys, kindShift, extra := delayKindsSource(t)
	delayAccepted := append([]string{"kind", "shift"}, extra...)
	for _, k := range sortedKeys(kindKeys) {
		for _, key := range kindKeys[k] {
			if !slices.Contains(delayAccepted, key) {
				delayAccepted = append(delayAccepted, key)
			}
		}
	}
	accepted["profile.delay"] = delayAccepted
	kt, ok := kinds["profile.delay"]
	if !ok {
		t.Fatalf("%s: no table marked <!-- kinds: profile.delay -->", formatsDoc)
	}
	documentedKinds := map[string]bool{}
	for _, r := range kt.rows {
		name := firstKey(t, "kinds", r)
		documentedKinds[name] = true
		want, ok := kindKeys[name]
		if !ok {
			t.Errorf("%s: delay kind %q is listed but is not a kind of the loader", formatsDoc, name)
			continue
		}
		var got []string
		for _, m := range backticked.FindAllStringSubmatch(r[1], -1) {
			got = append(got, m[1])
		}
		if !slices.Equal(got, want) {
			t.Errorf("%s: delay kind %s: keys %v, the loader's %v", formatsDoc, name, got, want)
		}
		if gotShift := r[2] == "yes"; gotShift != kindShift[name] {
			t.Errorf("%s: delay kind %s: shift %q, the loader allows shift: %v", formatsDoc, name, r[2], kindShift[name])
		}
	}
	for k := range kindKeys {
		if !documentedKinds[k] {
			t.Errorf("%s: delay kind %q is accepted by the loader but not listed", formatsDoc, k)
		}
	}

	// The CSV files.
	accepted["trace"] = trace.TraceColumns
	accepted["trace.meta"] = traceMetaKeys(t)
	accepted["record"] = emulate.RecordColumns
	accepted["frequency"] = report.FrequencyColumns(1)
	accepted["gainmap"] = report.GainMapColumns(&estimate.GainMap{})

	for _, id := range sortedKeys(keys) {
		if _, ok := accepted[id]; !ok {
			t.Errorf("%s: table %s is tied to no loader (see mappingSections)", formatsDoc, id)
		}
	}
	for _, id := range sortedKeys(accepted) {
		sameKeys(t, id, accepted[id], docKeys(t, keys, id))
	}
}

// docExample returns the indented code block that follows the first line
// containing after, within the "## " part headed section.
func docExample(t *testing.T, text, section, after string) string {
	t.Helper()
	part, ok := markdownSection(text, section)
	if !ok {
		t.Fatalf("%s: no part %q", formatsDoc, section)
	}
	k := strings.Index(part, after)
	if k < 0 {
		t.Fatalf("%s: %s: no %q", formatsDoc, section, after)
	}
	var block []string
	started := false
	for _, l := range strings.Split(part[k:], "\n")[1:] {
		switch {
		case strings.HasPrefix(l, "    "):
			started = true
			block = append(block, l[4:])
		case l == "" && !started:
		case l == "" && started:
			block = append(block, "")
		default:
			if started {
				return strings.TrimRight(strings.Join(block, "\n"), "\n") + "\n"
			}
		}
	}
	if !started {
		t.Fatalf("%s: %s: no example after %q", formatsDoc, section, after)
	}
	return strings.TrimRight(strings.Join(block, "\n"), "\n") + "\n"
}

// TestFormatsDocExamplesLoad loads the reference's complete examples with
// the loaders: a reader who copies one gets a file that validates.
func TestFormatsDocExamplesLoad(t *testing.T) {
	_, _, text := readDocTables(t)
	dir := t.TempDir()
	write := func(name, data string) string {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, []byte(data), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	const complete = "### A complete example"
	profile := docExample(t, text, sectionOf["profile"], complete)
	// The loop and the scenario examples name the profile example's file.
	profPath := write("skid-radio.yaml", profile)

	t.Run("profile", func(t *testing.T) {
		if _, err := profiles.Load(profPath); err != nil {
			t.Fatal(err)
		}
	})
	t.Run("loop", func(t *testing.T) {
		p := write("pump.loop.yaml", docExample(t, text, sectionOf["loop"], complete))
		loop, err := profiles.LoadLoop(p)
		if err != nil {
			t.Fatal(err)
		}
		// The example loop is a working loop: certified mean-square stable
		// over its example network.
		pr, err := estimate.Predict(loop, estimate.PredictOptions{SkipMargin: true})
		if err != nil {
			t.Fatal(err)
		}
		if !pr.MeanSquareStable {
			t.Errorf("the loop example is %s (ρ = %g), want a stable example", pr.Stability, pr.SpectralRadius)
		}
	})
	t.Run("loop binary decode", func(t *testing.T) {
		loopText := docExample(t, text, sectionOf["loop"], complete)
		head, _, ok := strings.Cut(loopText, "decode:")
		if !ok {
			t.Fatal("the loop example has no decode section")
		}
		bin := docExample(t, text, sectionOf["loop"], "A binary sensor datagram instead")
		p := write("pump-binary.loop.yaml", head+bin)
		if _, err := profiles.LoadLoop(p); err != nil {
			t.Fatal(err)
		}
	})
	t.Run("scenario", func(t *testing.T) {
		p := write("pump-soak.yaml", docExample(t, text, sectionOf["scenario"], complete))
		if _, err := profiles.LoadScenario(p); err != nil {
			t.Fatal(err)
		}
	})
	t.Run("lab", func(t *testing.T) {
		p := write("lab.yaml", docExample(t, text, sectionOf["lab"], complete))
		cfg, err := lab.Load(p)
		if err != nil {
			t.Fatal(err)
		}
		def := lab.Default()
		if !slices.Equal(cfg.Namespaces, def.Namespaces) || !slices.Equal(cfg.Links, def.Links) {
			t.Errorf("the lab example is %+v, the reference says it is the default %+v", cfg, def)
		}
	})
	t.Run("trace", func(t *testing.T) {
		ex := docExample(t, text, sectionOf["trace"], "At most 1 GiB")
		tr, err := trace.ReadTrace(strings.NewReader(ex), "example.csv")
		if err != nil {
			t.Fatal(err)
		}
		if len(tr.Probes) != 3 || !tr.ClocksSynced || tr.Interval != 0.002 {
			t.Errorf("trace example: %d probes, clocks synced %v, interval %g; want 3, true, 0.002", len(tr.Probes), tr.ClocksSynced, tr.Interval)
		}
	})
	t.Run("record", func(t *testing.T) {
		ex := docExample(t, text, sectionOf["record"], "with nine decimals")
		if !strings.HasPrefix(ex, emulate.RecordHeader) {
			t.Errorf("record example starts\n%s\nwant the relay's header\n%s", ex, emulate.RecordHeader)
		}
	})
}

// TestModelDocCitations checks that every "estimate/model.md §N" cited in the
// repository's Go sources, reference scripts and documents names a
// section estimate/model.md has.
func TestModelDocCitations(t *testing.T) {
	data, err := os.ReadFile("../estimate/model.md")
	if err != nil {
		t.Fatal(err)
	}
	have := map[string]bool{}
	for _, m := range regexp.MustCompile(`(?m)^## §(\d+) `).FindAllStringSubmatch(string(data), -1) {
		have[m[1]] = true
	}
	if len(have) < 10 {
		t.Fatalf("estimate/model.md: %d numbered sections found, want its §1 … §12", len(have))
	}
	cite := regexp.MustCompile(`(?:estimate/)?model\.md(?: \(| )((?:§\d+(?:–§\d+)?(?:, | and )?)+)`)
	num := regexp.MustCompile(`§(\d+)`)
	count := 0
	// Hidden folders and test data are left out, but for estimate's, which
	// holds the reference scripts.
	skip := func(dir string) bool {
		name := path.Base(dir)
		return strings.HasPrefix(name, ".") || name == "testdata" && dir != "estimate/testdata"
	}
	for _, rel := range repoFiles(t, skip) {
		switch path.Ext(rel) {
		case ".go", ".m", ".py", ".md":
		default:
			continue
		}
		b, err := os.ReadFile(filepath.Join("..", rel))
		if err != nil {
			t.Fatal(err)
		}
		for _, m := range cite.FindAllStringSubmatch(string(b), -1) {
			for _, n := range num.FindAllStringSubmatch(m[1], -1) {
				count++
				if !have[n[1]] {
					t.Errorf("%s: cites estimate/model.md §%s, which estimate/model.md does not have", rel, n[1])
				}
			}
		}
	}
	if count == 0 {
		t.Error("no citation of estimate/model.md found; the walk is broken")
	}
}
