package report

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"os"
	"time"
	"unicode/utf8"
)

// Provenance is what a lab lead files with a report: which build ran,
// how it was started, when, at which time scale, and from which inputs
// (each embedded and hashed, so that the report alone says what was run).
type Provenance struct {
	// Version is the module's version ("(devel)" for a build from a work
	// tree); Revision the VCS revision ("unknown" when not recorded);
	// Modified whether the work tree had uncommitted changes; Go the
	// toolchain.
	Version  string `json:"version"`
	Revision string `json:"revision"`
	Modified bool   `json:"modified"`
	Go       string `json:"go_version"`
	// CommandLine is the program's arguments, os.Args as given.
	CommandLine []string `json:"command_line"`
	// WorkDir is the directory relative paths are resolved against.
	WorkDir string `json:"work_dir,omitempty"`
	// TimeScale is --time-scale (1: real time).
	TimeScale float64 `json:"time_scale"`
	// Started and Ended are wall-clock times of the scenario's start and
	// of the run's end.
	Started time.Time `json:"started"`
	Ended   time.Time `json:"ended"`
	// Seed is the relay's seed, which makes its decisions reproducible.
	Seed uint64 `json:"seed"`
	// Inputs are the files the run read, in the order loop, profiles,
	// scenario.
	Inputs []Input `json:"inputs"`
}

// Input is one file a run read.
type Input struct {
	// Role says what the file was for: "loop", "loop's profile",
	// "scenario", "scenario's base profile", "profile of phase outage".
	Role   string `json:"role"`
	Path   string `json:"path"`
	Size   int64  `json:"size_bytes"`
	SHA256 string `json:"sha256"`
	// Text is the file's content when it is small UTF-8 text (embedded
	// in the report); empty otherwise, and NotEmbedded says why.
	Text        string `json:"-"`
	NotEmbedded string `json:"not_embedded,omitempty"`
	// Err is why the file could not be read back for the report.
	Err string `json:"error,omitempty"`
}

// MaxEmbed is the largest input the report embeds (the YAML inputs are a
// few kilobytes; a trace or a samples file is only hashed).
const MaxEmbed = 256 << 10

// ReadInput reads the file at path for the report: its SHA-256, its size
// and, when it is UTF-8 text of at most MaxEmbed bytes, its text. A file
// that cannot be read is returned with Err set, never dropped: the report
// must say that an input could not be read back.
func ReadInput(role, path string) Input {
	in := Input{Role: role, Path: path}
	b, err := os.ReadFile(path)
	if err != nil {
		in.Err = fmt.Sprintf("reading %s for the report: %v", path, err)
		return in
	}
	return InputFromBytes(role, path, b)
}

// InputFromBytes is ReadInput for content already read.
func InputFromBytes(role, path string, b []byte) Input {
	sum := sha256.Sum256(b)
	in := Input{Role: role, Path: path, Size: int64(len(b)), SHA256: hex.EncodeToString(sum[:])}
	switch {
	case len(b) > MaxEmbed:
		in.NotEmbedded = fmt.Sprintf("%d bytes, more than the %d the report embeds", len(b), MaxEmbed)
	case !utf8.Valid(b):
		in.NotEmbedded = "not UTF-8 text"
	default:
		in.Text = string(b)
	}
	return in
}
