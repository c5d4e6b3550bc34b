package main

import (
	"bufio"
	"fmt"
	"io"
	"net"
	"os"
	"os/exec"
	"strconv"
	"strings"
	"time"
)

// freeUDPPort and freeTCPPort ask the kernel for a port that is free on
// 127.0.0.1 now. The port is released before the child binds it; on a
// loopback bench that race is harmless.
func freeUDPPort() (int, error) {
	c, err := net.ListenUDP("udp4", &net.UDPAddr{IP: net.IPv4(127, 0, 0, 1)})
	if err != nil {
		return 0, err
	}
	defer c.Close()
	return c.LocalAddr().(*net.UDPAddr).Port, nil
}

func freeTCPPort() (int, error) {
	l, err := net.ListenTCP("tcp4", &net.TCPAddr{IP: net.IPv4(127, 0, 0, 1)})
	if err != nil {
		return 0, err
	}
	defer l.Close()
	return l.Addr().(*net.TCPAddr).Port, nil
}

// udpSocket is one row of /proc/net/udp.
type udpSocket struct {
	port  int
	drops uint64
}

// parseProcNetUDP reads /proc/net/udp: after a header line, one row per
// socket, local_address as HEXIP:HEXPORT in the second field and the
// socket's drop count in the last (proc(5), /proc/net/udp).
func parseProcNetUDP(r io.Reader, name string) ([]udpSocket, error) {
	var out []udpSocket
	sc := bufio.NewScanner(r)
	line := 0
	for sc.Scan() {
		line++
		f := strings.Fields(sc.Text())
		if line == 1 {
			continue
		}
		if len(f) < 13 {
			return nil, fmt.Errorf("%s:%d: want at least 13 fields, got %d", name, line, len(f))
		}
		_, hexPort, ok := strings.Cut(f[1], ":")
		if !ok {
			return nil, fmt.Errorf("%s:%d: local_address: want HEXIP:HEXPORT, got %q", name, line, f[1])
		}
		port, err := strconv.ParseUint(hexPort, 16, 16)
		if err != nil {
			return nil, fmt.Errorf("%s:%d: local port: %w", name, line, err)
		}
		drops, err := strconv.ParseUint(f[len(f)-1], 10, 64)
		if err != nil {
			return nil, fmt.Errorf("%s:%d: drops: %w", name, line, err)
		}
		out = append(out, udpSocket{port: int(port), drops: drops})
	}
	return out, sc.Err()
}

func udpSockets() ([]udpSocket, error) {
	f, err := os.Open("/proc/net/udp")
	if err != nil {
		return nil, err
	}
	defer f.Close()
	return parseProcNetUDP(f, "/proc/net/udp")
}

// udpDrops is the kernel's drop count of the socket bound to port (0 if
// none is).
func udpDrops(port int) uint64 {
	socks, err := udpSockets()
	if err != nil {
		return 0
	}
	var d uint64
	for _, s := range socks {
		if s.port == port {
			d += s.drops
		}
	}
	return d
}

// waitUDPBound polls /proc/net/udp until a socket is bound to port, for at
// most d, or until the process has exited.
func waitUDPBound(port int, p *proc, d time.Duration) error {
	deadline := time.Now().Add(d)
	for time.Now().Before(deadline) {
		if p != nil && p.exited() {
			return fmt.Errorf("%s exited before binding port %d: %s", p.name, port, tail(p.stderr))
		}
		socks, err := udpSockets()
		if err != nil {
			return err
		}
		for _, s := range socks {
			if s.port == port {
				return nil
			}
		}
		time.Sleep(10 * time.Millisecond)
	}
	return fmt.Errorf("nothing bound udp port %d within %v", port, d)
}

// cpuTicks is utime + stime of a process, in clock ticks, from
// /proc/PID/stat (fields 14 and 15, proc(5)); all its threads, live or
// exited, are included.
func cpuTicks(pid int) (uint64, error) {
	b, err := os.ReadFile(fmt.Sprintf("/proc/%d/stat", pid))
	if err != nil {
		return 0, err
	}
	return parseStatTicks(string(b), fmt.Sprintf("/proc/%d/stat", pid))
}

// parseStatTicks reads utime + stime from a /proc/PID/stat line. The
// command name, field 2, is in parentheses and may hold spaces and
// parentheses itself, so fields are counted after the last ')'.
func parseStatTicks(s, name string) (uint64, error) {
	i := strings.LastIndexByte(s, ')')
	if i < 0 {
		return 0, fmt.Errorf("%s: want \"PID (COMM) STATE …\", no ')' found", name)
	}
	f := strings.Fields(s[i+1:])
	// f[0] is field 3 (state), so field k is f[k-3].
	if len(f) < 13 {
		return 0, fmt.Errorf("%s: want at least 15 fields, got %d", name, len(f)+2)
	}
	ut, err := strconv.ParseUint(f[14-3], 10, 64)
	if err != nil {
		return 0, fmt.Errorf("%s: utime: %w", name, err)
	}
	st, err := strconv.ParseUint(f[15-3], 10, 64)
	if err != nil {
		return 0, fmt.Errorf("%s: stime: %w", name, err)
	}
	return ut + st, nil
}

// clockTicks is USER_HZ, the unit of /proc/PID/stat's times, from getconf;
// 100 (the value on every common Linux architecture) if getconf fails.
func clockTicks() float64 {
	out, err := exec.Command("getconf", "CLK_TCK").Output()
	if err == nil {
		if v, err := strconv.ParseFloat(strings.TrimSpace(string(out)), 64); err == nil && v > 0 {
			return v
		}
	}
	return 100
}

// cpuTotals are the machine's CPU times from the first line of /proc/stat,
// in clock ticks: busy is user + nice + system (softirq and irq left out,
// since the kernel books the loopback deliveries of our own processes
// there), steal is time the hypervisor gave to other guests.
type cpuTotals struct{ busy, steal uint64 }

func readCPUTotals() (cpuTotals, error) {
	b, err := os.ReadFile("/proc/stat")
	if err != nil {
		return cpuTotals{}, err
	}
	return parseCPUTotals(string(b), "/proc/stat")
}

// parseCPUTotals reads "cpu user nice system idle iowait irq softirq steal
// …" (proc(5), /proc/stat).
func parseCPUTotals(s, name string) (cpuTotals, error) {
	line, _, _ := strings.Cut(s, "\n")
	f := strings.Fields(line)
	if len(f) < 9 || f[0] != "cpu" {
		return cpuTotals{}, fmt.Errorf("%s:1: want \"cpu user nice system idle iowait irq softirq steal …\", got %q", name, line)
	}
	var v [8]uint64
	for i := range v {
		x, err := strconv.ParseUint(f[i+1], 10, 64)
		if err != nil {
			return cpuTotals{}, fmt.Errorf("%s:1: field %d: %w", name, i+2, err)
		}
		v[i] = x
	}
	return cpuTotals{busy: v[0] + v[1] + v[2], steal: v[7]}, nil
}
