package main

import (
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"sync"
	"syscall"
	"time"
)

// proc is one child process: a forwarder, the sink or the generator. Its
// standard output and error go to files in the trial's directory.
type proc struct {
	name   string
	cmd    *exec.Cmd
	stdout string // path
	stderr string // path
	done   chan struct{}
	err    error // set before done is closed
}

// procs tracks the live children so that a signal or a failure can stop
// them all; every start registers, every exit unregisters.
type procs struct {
	mu   sync.Mutex
	live map[*proc]bool
}

func newProcs() *procs { return &procs{live: map[*proc]bool{}} }

// start runs argv with its output in dir/name.{stdout,stderr}. A child dies
// with the orchestrator (Pdeathsig) even if it is killed outright.
func (ps *procs) start(dir, name string, argv []string) (*proc, error) {
	p := &proc{
		name:   name,
		stdout: filepath.Join(dir, name+".stdout"),
		stderr: filepath.Join(dir, name+".stderr"),
		done:   make(chan struct{}),
	}
	so, err := os.Create(p.stdout)
	if err != nil {
		return nil, err
	}
	se, err := os.Create(p.stderr)
	if err != nil {
		so.Close()
		return nil, err
	}
	p.cmd = exec.Command(argv[0], argv[1:]...)
	p.cmd.Stdout, p.cmd.Stderr = so, se
	p.cmd.SysProcAttr = &syscall.SysProcAttr{Pdeathsig: syscall.SIGKILL}
	if err := p.cmd.Start(); err != nil {
		so.Close()
		se.Close()
		return nil, fmt.Errorf("starting %s: %w", name, err)
	}
	ps.mu.Lock()
	ps.live[p] = true
	ps.mu.Unlock()
	go func() {
		p.err = p.cmd.Wait()
		so.Close()
		se.Close()
		ps.mu.Lock()
		delete(ps.live, p)
		ps.mu.Unlock()
		close(p.done)
	}()
	return p, nil
}

func (p *proc) pid() int { return p.cmd.Process.Pid }

func (p *proc) exited() bool {
	select {
	case <-p.done:
		return true
	default:
		return false
	}
}

// wait waits up to d for the child to exit by itself, then kills it.
func (p *proc) wait(d time.Duration) error {
	select {
	case <-p.done:
		return p.err
	case <-time.After(d):
		_ = p.cmd.Process.Kill()
		<-p.done
		return fmt.Errorf("%s did not exit within %v; killed", p.name, d)
	}
}

// stop sends SIGTERM and waits up to d, then kills. An exit caused by the
// SIGTERM itself is not an error, whether the child died of the signal or
// caught it and exited with status 128+15 (socat does).
func (p *proc) stop(d time.Duration) error {
	if p.exited() {
		return p.err
	}
	_ = p.cmd.Process.Signal(syscall.SIGTERM)
	err := p.wait(d)
	var ee *exec.ExitError
	if errors.As(err, &ee) {
		if ws, ok := ee.Sys().(syscall.WaitStatus); ok &&
			(ws.Signaled() && ws.Signal() == syscall.SIGTERM || ws.Exited() && ws.ExitStatus() == 128+int(syscall.SIGTERM)) {
			return nil
		}
	}
	return err
}

// killAll stops every live child: SIGTERM, then SIGKILL after a grace.
func (ps *procs) killAll(grace time.Duration) {
	ps.mu.Lock()
	live := make([]*proc, 0, len(ps.live))
	for p := range ps.live {
		live = append(live, p)
	}
	ps.mu.Unlock()
	for _, p := range live {
		_ = p.cmd.Process.Signal(syscall.SIGTERM)
	}
	deadline := time.After(grace)
	for _, p := range live {
		select {
		case <-p.done:
		case <-deadline:
			_ = p.cmd.Process.Kill()
		}
	}
}

// tail is the last few hundred bytes of a file, for error messages.
func tail(path string) string {
	b, err := os.ReadFile(path)
	if err != nil {
		return ""
	}
	if len(b) > 400 {
		b = b[len(b)-400:]
	}
	return string(b)
}
