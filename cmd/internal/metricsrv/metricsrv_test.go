package metricsrv

import (
	"io"
	"log/slog"
	"net/http"
	"strings"
	"testing"

	"github.com/prometheus/client_golang/prometheus"
)

// The endpoint serves rigwire_build_info beside the registry's own metrics,
// and starting twice on one registry is not an error.
func TestBuildInfoServed(t *testing.T) {
	reg := prometheus.NewRegistry()
	log := slog.New(slog.NewTextHandler(io.Discard, nil))
	for range 2 {
		s, err := Start("127.0.0.1:0", reg, log)
		if err != nil {
			t.Fatal(err)
		}
		resp, err := http.Get(s.URL)
		if err != nil {
			t.Fatal(err)
		}
		body, _ := io.ReadAll(resp.Body)
		resp.Body.Close()
		s.Close()
		b := ReadBuild()
		want := `rigwire_build_info{goversion="` + b.Go + `",modified="`
		if !strings.Contains(string(body), want) || !strings.Contains(string(body), `version="`+b.Version+`"} 1`) {
			t.Errorf("no build info line like %q in:\n%s", want, body)
		}
	}
}
