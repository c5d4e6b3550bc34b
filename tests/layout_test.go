package tests

import (
	"bufio"
	"go/parser"
	"go/token"
	"os"
	"path"
	"path/filepath"
	"regexp"
	"slices"
	"strings"
	"testing"
)

// The floor plan: the folders are the pipeline and cmd/ only wires it
// (README.md, "How it fits together"; DEVELOPERS.md, the table). These
// checks keep it so as the code grows.

// topLevel is what the repository's top level holds, and nothing else
// (besides .git and files git ignores).
var topLevel = []string{".ci", ".gitignore", "DEVELOPERS.md", "README.md", "cmd", "deploy", "emulate",
	"estimate", "go.mod", "go.sum", "profiles", "tests"}

// Limits of the floor plan.
const (
	maxCmdShare       = 0.20 // of the repository's non-test Go lines under cmd/
	maxCommandFileLen = 250  // lines of one non-test file of a command
)

// repoFiles lists the repository's files (relative to its root,
// slash-separated), leaving out .git and every folder skip says (given
// its relative path). The checks of the tree and of its documents all
// walk it with this.
func repoFiles(t *testing.T, skip func(dir string) bool) []string {
	t.Helper()
	var out []string
	err := filepath.WalkDir("..", func(p string, d os.DirEntry, err error) error {
		if err != nil {
			return err
		}
		rel := filepath.ToSlash(strings.TrimPrefix(p, "../"))
		if d.IsDir() {
			if p != ".." && (d.Name() == ".git" || skip(rel)) {
				return filepath.SkipDir
			}
			return nil
		}
		out = append(out, rel)
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return out
}

// goFiles lists the repository's Go files (relative, slash-separated),
// skipping testdata.
func goFiles(t *testing.T) []string {
	t.Helper()
	var out []string
	for _, f := range repoFiles(t, func(dir string) bool { return path.Base(dir) == "testdata" }) {
		if strings.HasSuffix(f, ".go") {
			out = append(out, f)
		}
	}
	return out
}

func countLines(t *testing.T, rel string) int {
	t.Helper()
	f, err := os.Open(filepath.Join("..", rel))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	n := 0
	sc := bufio.NewScanner(f)
	sc.Buffer(make([]byte, 1<<20), 1<<20)
	for sc.Scan() {
		n++
	}
	if err := sc.Err(); err != nil {
		t.Fatal(err)
	}
	return n
}

func TestLayoutTopLevel(t *testing.T) {
	entries, err := os.ReadDir("..")
	if err != nil {
		t.Fatal(err)
	}
	var got []string
	for _, e := range entries {
		if n := e.Name(); n != ".git" && !ignoredTopLevel(n) {
			got = append(got, n)
		}
	}
	for _, n := range got {
		if !slices.Contains(topLevel, n) {
			t.Errorf("top level holds %q: the top level is %v; put it under the folder whose job it serves", n, topLevel)
		}
	}
	for _, n := range topLevel {
		if !slices.Contains(got, n) {
			t.Errorf("top level lacks %q", n)
		}
	}
}

// ignoredTopLevel is what .gitignore keeps out of the repository at the
// top (built binaries, a local bin/), so a working tree passes too.
func ignoredTopLevel(name string) bool {
	return name == "bin" || name == "impair" || name == "monitor" || strings.HasSuffix(name, ".test") ||
		strings.HasSuffix(name, ".prof")
}

func TestLayoutCommandsOnlyWire(t *testing.T) {
	var all, cmd int
	for _, f := range goFiles(t) {
		if strings.HasSuffix(f, "_test.go") {
			continue
		}
		n := countLines(t, f)
		all += n
		if strings.HasPrefix(f, "cmd/") {
			cmd += n
		}
		if (strings.HasPrefix(f, "cmd/impair/") || strings.HasPrefix(f, "cmd/monitor/")) && strings.Count(f, "/") == 2 && n > maxCommandFileLen {
			t.Errorf("%s: %d lines; a command file holds flags and wiring, at most %d lines", f, n, maxCommandFileLen)
		}
	}
	share := float64(cmd) / float64(all)
	t.Logf("cmd/ holds %d of %d non-test Go lines (%.1f %%)", cmd, all, 100*share)
	if share > maxCmdShare {
		t.Errorf("cmd/ holds %.1f %% of the non-test Go lines, want at most %.0f %%: library code belongs under the folder whose job it serves", 100*share, 100*maxCmdShare)
	}
}

// Every package has a doc comment that says what it delivers and where it
// sits in the flow ("Place in the flow:"); under cmd/ only the two
// commands are main packages, and every other package is in cmd/internal.
func TestLayoutPackages(t *testing.T) {
	dirs := map[string][]string{}
	for _, f := range goFiles(t) {
		if strings.HasSuffix(f, "_test.go") {
			continue
		}
		dirs[filepath.ToSlash(filepath.Dir(f))] = append(dirs[filepath.ToSlash(filepath.Dir(f))], f)
	}
	for dir, files := range dirs {
		fset := token.NewFileSet()
		var name, doc string
		for _, f := range files {
			af, err := parser.ParseFile(fset, filepath.Join("..", f), nil, parser.PackageClauseOnly|parser.ParseComments)
			if err != nil {
				t.Fatal(err)
			}
			name = af.Name.Name
			if af.Doc != nil {
				doc += af.Doc.Text()
			}
		}
		if dir == "." {
			t.Errorf("Go files at the top level: %v", files)
			continue
		}
		if doc == "" {
			t.Errorf("%s: package %s has no doc comment", dir, name)
		} else if !strings.Contains(doc, "Place in the flow") {
			t.Errorf("%s: package %s's doc comment does not say its place in the flow (\"Place in the flow: …\")", dir, name)
		}
		if strings.HasPrefix(dir, "cmd/") {
			switch {
			case dir == "cmd/impair" || dir == "cmd/monitor":
				if name != "main" {
					t.Errorf("%s: package %s, want main", dir, name)
				}
			case !strings.HasPrefix(dir, "cmd/internal/"):
				t.Errorf("%s: package %s under cmd/ outside cmd/internal: a library belongs under the folder whose job it serves", dir, name)
			case name == "main":
				t.Errorf("%s: a main package under cmd/internal", dir)
			}
		}
	}
}

// markdownSection returns the text under the heading line of a markdown
// text, up to the next "## " heading; ok is false when text has no such
// heading. The layout's and the formats' checks both read documents with
// it.
func markdownSection(text, heading string) (section string, ok bool) {
	i := strings.Index(text, "\n"+heading+"\n")
	if i < 0 {
		return "", false
	}
	section = text[i+len(heading)+2:]
	if j := strings.Index(section, "\n## "); j >= 0 {
		section = section[:j]
	}
	return section, true
}

// docSection is the section under heading of the repository's document
// doc (markdownSection).
func docSection(t *testing.T, doc, heading string) string {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("..", doc))
	if err != nil {
		t.Fatal(err)
	}
	s, ok := markdownSection(string(b), heading)
	if !ok {
		t.Fatalf("%s: no section %q", doc, heading)
	}
	return s
}

var (
	repoPath = regexp.MustCompile(`\b(?:profiles|emulate|estimate|cmd|deploy|tests)(?:/[a-z0-9_]+)+(?:\.[a-z]+)?\b`)
	goFile   = regexp.MustCompile(`(?:^|[^/a-z0-9_])([a-z0-9_]+\*?\.go)\b`) // a file name, not the end of a path
)

// TestLayoutDocumented: the README's "How it fits together" names only
// paths and files that exist; DEVELOPERS.md's table names every package,
// and only folders and files that exist.
func TestLayoutDocumented(t *testing.T) {
	exists := func(rel string) bool {
		_, err := os.Stat(filepath.Join("..", rel))
		return err == nil
	}
	fileSomewhere := map[string]bool{}
	for _, f := range goFiles(t) {
		fileSomewhere[filepath.Base(f)] = true
	}
	fileExists := func(dir, name string) bool {
		if strings.Contains(name, "*") {
			m, _ := filepath.Glob(filepath.Join("..", dir, name))
			return len(m) > 0
		}
		if dir == "" {
			return fileSomewhere[name]
		}
		return exists(filepath.Join(dir, name))
	}

	readme := docSection(t, "README.md", "## How it fits together")
	for _, p := range repoPath.FindAllString(readme, -1) {
		if !exists(p) {
			t.Errorf("README.md, How it fits together: %s does not exist", p)
		}
	}
	for _, m := range goFile.FindAllStringSubmatch(readme, -1) {
		if !fileExists("", m[1]) {
			t.Errorf("README.md, How it fits together: no file %s in the tree", m[1])
		}
	}

	table := docSection(t, "DEVELOPERS.md", "## Where things live")
	rows := map[string]bool{}
	for _, line := range strings.Split(table, "\n") {
		if !strings.HasPrefix(line, "| `") {
			continue
		}
		cells := strings.SplitN(line, "|", 4)
		dir := strings.Trim(strings.TrimSpace(cells[1]), "`")
		rows[dir] = true
		if st, err := os.Stat(filepath.Join("..", dir)); err != nil || !st.IsDir() {
			t.Errorf("DEVELOPERS.md: the table names %s, which is not a folder", dir)
			continue
		}
		for _, m := range goFile.FindAllStringSubmatch(cells[2], -1) {
			if !fileExists(dir, m[1]) {
				t.Errorf("DEVELOPERS.md: the row of %s names %s, which is not in it", dir, m[1])
			}
		}
	}
	pkgs := map[string]bool{}
	for _, f := range goFiles(t) {
		pkgs[filepath.ToSlash(filepath.Dir(f))] = true
	}
	for dir := range pkgs {
		if !rows[dir] {
			t.Errorf("DEVELOPERS.md: the table has no row for the package in %s", dir)
		}
	}
}

// markdownLink is a link of a markdown document: its target, up to an
// anchor.
var markdownLink = regexp.MustCompile(`\]\(([^)#\s]*)(?:#[^)]*)?\)`)

// TestDocumentLinks: every link of the repository's markdown documents to
// a file of the repository names one that exists, relative to the
// document (documents move with the floor plan; their links must follow).
func TestDocumentLinks(t *testing.T) {
	docs, links := 0, 0
	for _, doc := range repoFiles(t, func(dir string) bool { return strings.HasPrefix(path.Base(dir), ".") || path.Base(dir) == "testdata" }) {
		if path.Ext(doc) != ".md" {
			continue
		}
		docs++
		b, err := os.ReadFile(filepath.Join("..", doc))
		if err != nil {
			t.Fatal(err)
		}
		for _, m := range markdownLink.FindAllStringSubmatch(string(b), -1) {
			target := m[1]
			if target == "" || strings.Contains(target, "://") || strings.HasPrefix(target, "mailto:") {
				continue
			}
			links++
			if _, err := os.Stat(filepath.Join("..", path.Dir(doc), target)); err != nil {
				t.Errorf("%s: the link to %s names no file (relative to %s)", doc, target, path.Dir(doc))
			}
		}
	}
	if docs == 0 {
		t.Error("no markdown document found; the walk is broken")
	}
	t.Logf("%d links of %d documents checked", links, docs)
}
