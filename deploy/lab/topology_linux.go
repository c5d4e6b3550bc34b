package lab

import (
	"errors"
	"fmt"
	"io"
	"net"
	"os"
	"path/filepath"
	"runtime"

	"github.com/vishvananda/netlink"
	"github.com/vishvananda/netns"
	"golang.org/x/sys/unix"
)

// Build creates what cfg describes and is missing — namespaces, veth pairs,
// addresses, links up, routes — leaving what already exists as it is, and
// prints one line per step to w. Running it twice changes nothing the
// second time.
func Build(cfg Config, w io.Writer) error {
	runtime.LockOSThread()
	defer runtime.UnlockOSThread()
	origin, err := netns.Get()
	if err != nil {
		return fmt.Errorf("lab build: current namespace: %w", err)
	}
	defer origin.Close()
	// NewNamed switches this thread into the namespace it creates; come
	// back before the thread is unlocked.
	defer netns.Set(origin)

	handles := map[string]*netlink.Handle{}
	nsHandles := map[string]netns.NsHandle{}
	defer func() {
		for _, h := range handles {
			h.Close()
		}
		for _, n := range nsHandles {
			n.Close()
		}
	}()
	for _, name := range cfg.Namespaces {
		ns, err := openNamed(name)
		switch {
		case err == nil:
			fmt.Fprintf(w, "namespace %s: exists\n", name)
		case errors.Is(err, os.ErrNotExist):
			ns, err = netns.NewNamed(name)
			if err != nil {
				return fmt.Errorf("lab build: creating namespace %s: %w", name, permHint(err))
			}
			if err := netns.Set(origin); err != nil {
				return fmt.Errorf("lab build: back to the first namespace: %w", err)
			}
			fmt.Fprintf(w, "namespace %s: created\n", name)
		default:
			return fmt.Errorf("lab build: namespace %s: %w", name, err)
		}
		nsHandles[name] = ns
		h, err := netlink.NewHandleAt(ns)
		if err != nil {
			return fmt.Errorf("lab build: netlink in %s: %w", name, permHint(err))
		}
		handles[name] = h
		lo, err := h.LinkByName("lo")
		if err != nil {
			return fmt.Errorf("lab build: %s/lo: %w", name, err)
		}
		if err := h.LinkSetUp(lo); err != nil {
			return fmt.Errorf("lab build: %s/lo up: %w", name, permHint(err))
		}
	}
	for _, l := range cfg.Links {
		ha, hb := handles[l.A], handles[l.B]
		_, errA := ha.LinkByName(l.IfA())
		_, errB := hb.LinkByName(l.IfB())
		switch {
		case errA == nil && errB == nil:
			fmt.Fprintf(w, "link %s/%s – %s/%s: exists\n", l.A, l.IfA(), l.B, l.IfB())
		case errA == nil || errB == nil:
			return fmt.Errorf("lab build: link %s/%s – %s/%s: only one end exists; run lab remove first", l.A, l.IfA(), l.B, l.IfB())
		default:
			veth := &netlink.Veth{
				LinkAttrs:     netlink.LinkAttrs{Name: l.IfA()},
				PeerName:      l.IfB(),
				PeerNamespace: netlink.NsFd(nsHandles[l.B]),
			}
			if err := ha.LinkAdd(veth); err != nil {
				return fmt.Errorf("lab build: veth %s/%s – %s/%s: %w", l.A, l.IfA(), l.B, l.IfB(), permHint(err))
			}
			fmt.Fprintf(w, "link %s/%s – %s/%s: created\n", l.A, l.IfA(), l.B, l.IfB())
		}
		for _, end := range []struct {
			ns, ifname string
			h          *netlink.Handle
			addr       string
		}{{l.A, l.IfA(), ha, l.AddrA().String()}, {l.B, l.IfB(), hb, l.AddrB().String()}} {
			link, err := end.h.LinkByName(end.ifname)
			if err != nil {
				return fmt.Errorf("lab build: %s/%s: %w", end.ns, end.ifname, err)
			}
			a, err := netlink.ParseAddr(end.addr)
			if err != nil {
				return fmt.Errorf("lab build: %s: %w", end.addr, err)
			}
			if err := end.h.AddrReplace(link, a); err != nil {
				return fmt.Errorf("lab build: address %s on %s/%s: %w", end.addr, end.ns, end.ifname, permHint(err))
			}
			if err := end.h.LinkSetUp(link); err != nil {
				return fmt.Errorf("lab build: %s/%s up: %w", end.ns, end.ifname, permHint(err))
			}
			fmt.Fprintf(w, "address %s on %s/%s, up\n", end.addr, end.ns, end.ifname)
		}
	}
	// A namespace with a single link reaches every other subnet through
	// the peer on it.
	for _, name := range cfg.Namespaces {
		var mine []Link
		for _, l := range cfg.Links {
			if l.A == name || l.B == name {
				mine = append(mine, l)
			}
		}
		if len(mine) != 1 {
			continue
		}
		l := mine[0]
		ifname, via := l.IfA(), l.AddrB().Addr()
		if l.B == name {
			ifname, via = l.IfB(), l.AddrA().Addr()
		}
		h := handles[name]
		link, err := h.LinkByName(ifname)
		if err != nil {
			return fmt.Errorf("lab build: %s/%s: %w", name, ifname, err)
		}
		for _, o := range cfg.Links {
			if o == l {
				continue
			}
			dst := &net.IPNet{IP: o.Subnet.Addr().AsSlice(), Mask: net.CIDRMask(o.Subnet.Bits(), 32)}
			r := &netlink.Route{LinkIndex: link.Attrs().Index, Dst: dst, Gw: via.AsSlice()}
			if err := h.RouteReplace(r); err != nil {
				return fmt.Errorf("lab build: route %s via %s in %s: %w", o.Subnet, via, name, permHint(err))
			}
			fmt.Fprintf(w, "route %s via %s dev %s in %s\n", o.Subnet, via, ifname, name)
		}
	}
	return nil
}

// Remove removes cfg's namespaces, and with them their veth pairs,
// addresses and routes, printing one line per namespace. Namespaces that
// do not exist are reported and skipped. A process still inside a
// namespace keeps it alive, nameless, until it exits.
func Remove(cfg Config, w io.Writer) error {
	var errs []error
	for _, name := range cfg.Namespaces {
		ns, err := netns.GetFromName(name)
		if errors.Is(err, os.ErrNotExist) {
			fmt.Fprintf(w, "namespace %s: absent\n", name)
			continue
		}
		if err == nil {
			ns.Close()
		}
		if err := deleteNamed(name); err != nil {
			errs = append(errs, fmt.Errorf("lab remove: removing namespace %s: %w", name, permHint(err)))
			continue
		}
		fmt.Fprintf(w, "namespace %s: removed\n", name)
	}
	return errors.Join(errs...)
}

// openNamed opens the namespace mounted at /run/netns/NAME. A file there
// that is not a namespace (left by an interrupted creation) counts as
// absent: os.ErrNotExist.
func openNamed(name string) (netns.NsHandle, error) {
	ns, err := netns.GetFromName(name)
	if err != nil {
		return ns, err
	}
	var st unix.Statfs_t
	if err := unix.Fstatfs(int(ns), &st); err != nil || st.Type != unix.NSFS_MAGIC {
		ns.Close()
		return netns.None(), fmt.Errorf("/run/netns/%s is not a mounted namespace: %w", name, os.ErrNotExist)
	}
	return ns, nil
}

// deleteNamed unmounts and removes /run/netns/NAME. Unlike
// netns.DeleteNamed it also removes a file left unmounted by an earlier
// failure (EINVAL from umount).
func deleteNamed(name string) error {
	path := filepath.Join("/run/netns", name)
	if err := unix.Unmount(path, unix.MNT_DETACH); err != nil && !errors.Is(err, unix.EINVAL) {
		return fmt.Errorf("unmounting %s: %w", path, err)
	}
	return os.Remove(path)
}

// Exists reports which of cfg's namespaces exist now.
func Exists(cfg Config) map[string]bool {
	out := map[string]bool{}
	for _, name := range cfg.Namespaces {
		ns, err := openNamed(name)
		if err == nil {
			ns.Close()
		}
		out[name] = err == nil
	}
	return out
}

// permHint adds what to do when the kernel refused for lack of privilege.
func permHint(err error) error {
	if errors.Is(err, unix.EPERM) || errors.Is(err, unix.EACCES) {
		return fmt.Errorf("%w (needs root, or CAP_NET_ADMIN and CAP_SYS_ADMIN)", err)
	}
	return err
}
