package metricsrv

import (
	"context"
	"errors"
	"log/slog"
	"net"
	"net/http"
	"runtime"
	"runtime/debug"
	"strconv"
	"time"

	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/promhttp"
)

// Server is a running metrics endpoint; a nil *Server (metrics off) is
// valid and does nothing.
type Server struct {
	srv *http.Server
	// URL is where the metrics are, e.g. http://127.0.0.1:9471/metrics.
	URL string
}

// Start listens on addr ("off": no endpoint, nil server) and serves reg,
// with rigwire_build_info added to it.
func Start(addr string, reg *prometheus.Registry, log *slog.Logger) (*Server, error) {
	if addr == "off" {
		return nil, nil
	}
	if err := reg.Register(BuildInfo()); err != nil && !errors.As(err, new(prometheus.AlreadyRegisteredError)) {
		return nil, err
	}
	ln, err := net.Listen("tcp", addr)
	if err != nil {
		return nil, err
	}
	mux := http.NewServeMux()
	mux.Handle("/metrics", promhttp.HandlerFor(reg, promhttp.HandlerOpts{Registry: reg}))
	s := &Server{
		srv: &http.Server{Handler: mux, ReadHeaderTimeout: 5 * time.Second},
		URL: "http://" + ln.Addr().String() + "/metrics",
	}
	go func() {
		if err := s.srv.Serve(ln); err != nil && !errors.Is(err, http.ErrServerClosed) {
			log.Error("metrics server", "err", err)
		}
	}()
	log.Info("metrics", "url", s.URL)
	return s, nil
}

// Close shuts the endpoint down, waiting at most a second for scrapes in
// progress.
func (s *Server) Close() {
	if s == nil {
		return
	}
	ctx, done := context.WithTimeout(context.Background(), time.Second)
	defer done()
	_ = s.srv.Shutdown(ctx)
}

// Build is what the binary knows of its own build.
type Build struct {
	Version  string // the module's version, "(devel)" for a build from a work tree
	Revision string // the VCS revision, "unknown" when not recorded
	Modified bool   // the work tree had uncommitted changes
	Go       string // the Go toolchain
}

// ReadBuild reads the binary's build information.
func ReadBuild() Build {
	b := Build{Version: "(devel)", Revision: "unknown", Go: runtime.Version()}
	bi, ok := debug.ReadBuildInfo()
	if !ok {
		return b
	}
	if v := bi.Main.Version; v != "" {
		b.Version = v
	}
	for _, s := range bi.Settings {
		switch s.Key {
		case "vcs.revision":
			b.Revision = s.Value
		case "vcs.modified":
			b.Modified = s.Value == "true"
		}
	}
	return b
}

// String is the build in one line: "(devel) 1a2b3c4d… (modified), go1.26".
func (b Build) String() string {
	rev := b.Revision
	if len(rev) > 12 {
		rev = rev[:12]
	}
	s := b.Version + " " + rev
	if b.Modified {
		s += " (modified)"
	}
	return s + ", " + b.Go
}

// BuildInfo is the rigwire_build_info gauge: 1, with the build as labels.
func BuildInfo() prometheus.Collector {
	b := ReadBuild()
	g := prometheus.NewGauge(prometheus.GaugeOpts{
		Name: "rigwire_build_info",
		Help: "1, labelled with the build of the program serving these metrics.",
		ConstLabels: prometheus.Labels{"version": b.Version, "revision": b.Revision,
			"modified": strconv.FormatBool(b.Modified), "goversion": b.Go},
	})
	g.Set(1)
	return g
}
