// Package metricsrv serves a Prometheus registry at /metrics for rigwire's
// commands: bound before the command starts its work, so that a busy or bad
// address is reported at once, and shut down when the command ends.
package metricsrv

import (
	"context"
	"errors"
	"log/slog"
	"net"
	"net/http"
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

// Start listens on addr ("off": no endpoint, nil server) and serves reg.
func Start(addr string, reg *prometheus.Registry, log *slog.Logger) (*Server, error) {
	if addr == "off" {
		return nil, nil
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
