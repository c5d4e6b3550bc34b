package lab

import (
	"net/netip"
	"regexp"
	"rigwire/profiles/yamlpos"
)

// Config is a lab topology: namespaces and the point-to-point links
// between them.
type Config struct {
	Namespaces []string
	Links      []Link
}

// Link is one veth pair between namespaces A and B on a subnet: A takes its
// first host address, B the second. The interface in A is named "to-"+B and
// the one in B "to-"+A.
type Link struct {
	A, B   string
	Subnet netip.Prefix
}

// AddrA and AddrB are the two ends' addresses with the subnet's length.
func (l Link) AddrA() netip.Prefix { return netip.PrefixFrom(l.Subnet.Addr().Next(), l.Subnet.Bits()) }

// AddrB is B's address, the subnet's second host.
func (l Link) AddrB() netip.Prefix {
	return netip.PrefixFrom(l.Subnet.Addr().Next().Next(), l.Subnet.Bits())
}

// IfA is the interface's name in A, IfB in B.
func (l Link) IfA() string { return "to-" + l.B }

// IfB is the interface's name in B.
func (l Link) IfB() string { return "to-" + l.A }

// Default is the three-namespace chain of the package documentation.
func Default() Config {
	return Config{
		Namespaces: []string{"rw-rig", "rw-relay", "rw-ctl"},
		Links: []Link{
			{A: "rw-rig", B: "rw-relay", Subnet: netip.MustParsePrefix("10.213.1.0/30")},
			{A: "rw-relay", B: "rw-ctl", Subnet: netip.MustParsePrefix("10.213.2.0/30")},
		},
	}
}

// nsName: a namespace name must leave room for "to-" in a 15-byte
// interface name (IFNAMSIZ 16 with its NUL, linux/if.h).
var nsName = regexp.MustCompile(`^[a-z0-9][a-z0-9-]{0,11}$`)

// private is where lab subnets must lie: the RFC 1918 ranges.
var private = []netip.Prefix{
	netip.MustParsePrefix("10.0.0.0/8"),
	netip.MustParsePrefix("172.16.0.0/12"),
	netip.MustParsePrefix("192.168.0.0/16"),
}

// Load reads a topology file:
//
//	namespaces: [rw-rig, rw-relay, rw-ctl]
//	links:
//	  - {a: rw-rig, b: rw-relay, subnet: 10.213.1.0/30}
//	  - {a: rw-relay, b: rw-ctl, subnet: 10.213.2.0/30}
func Load(path string) (Config, error) {
	data, err := yamlpos.ReadInputFile(path, "lab topology", yamlpos.MaxYAMLBytes)
	if err != nil {
		return Config{}, err
	}
	return Parse(path, data)
}

// Parse decodes and validates a topology file's contents; file names it in
// errors.
func Parse(file string, data []byte) (Config, error) {
	var cfg Config
	root, err := yamlpos.Document(file, data)
	if err != nil {
		return cfg, err
	}
	top, err := root.Mapping("namespaces", "links")
	if err != nil {
		return cfg, err
	}
	nsf, ok := top["namespaces"]
	if !ok {
		return cfg, root.Errorf("missing key \"namespaces\"")
	}
	names, err := nsf.Seq()
	if err != nil {
		return cfg, err
	}
	if len(names) == 0 {
		return cfg, nsf.Errorf("want at least one namespace, got none")
	}
	known := map[string]bool{}
	for _, f := range names {
		s, err := f.Text()
		if err != nil {
			return cfg, err
		}
		if !nsName.MatchString(s) {
			return cfg, f.Errorf("want a name of 1 to 12 lowercase letters, digits or '-', got %s", yamlpos.Token(s))
		}
		if known[s] {
			return cfg, f.Errorf("namespace %q listed twice", s)
		}
		known[s] = true
		cfg.Namespaces = append(cfg.Namespaces, s)
	}
	lf, ok := top["links"]
	if !ok {
		return cfg, nil
	}
	links, err := lf.Seq()
	if err != nil {
		return cfg, err
	}
	pairs := map[[2]string]bool{}
	for _, f := range links {
		m, err := f.Mapping("a", "b", "subnet")
		if err != nil {
			return cfg, err
		}
		var l Link
		for _, end := range []struct {
			key string
			dst *string
		}{{"a", &l.A}, {"b", &l.B}} {
			ef, ok := m[end.key]
			if !ok {
				return cfg, f.Errorf("missing key %q", end.key)
			}
			s, err := ef.Text()
			if err != nil {
				return cfg, err
			}
			if !known[s] {
				return cfg, ef.Errorf("want one of the namespaces listed, got %s", yamlpos.Token(s))
			}
			*end.dst = s
		}
		if l.A == l.B {
			return cfg, f.Errorf("want two different namespaces, got %q twice", l.A)
		}
		pair := [2]string{min(l.A, l.B), max(l.A, l.B)}
		if pairs[pair] {
			return cfg, f.Errorf("second link between %q and %q", pair[0], pair[1])
		}
		pairs[pair] = true
		sf, ok := m["subnet"]
		if !ok {
			return cfg, f.Errorf("missing key \"subnet\"")
		}
		s, err := sf.Text()
		if err != nil {
			return cfg, err
		}
		p, err := netip.ParsePrefix(s)
		if err != nil || !p.Addr().Is4() || p.Bits() < 24 || p.Bits() > 30 || p.Masked() != p {
			return cfg, sf.Errorf("want an IPv4 subnet from /24 to /30 such as 10.213.1.0/30, got %s", yamlpos.Token(s))
		}
		inside := false
		for _, r := range private {
			inside = inside || r.Contains(p.Addr()) && r.Bits() <= p.Bits()
		}
		if !inside {
			return cfg, sf.Errorf("want a private (RFC 1918) subnet, got %s", yamlpos.Token(s))
		}
		for _, o := range cfg.Links {
			if o.Subnet.Overlaps(p) {
				return cfg, sf.Errorf("subnet %s overlaps %s of link %s–%s", p, o.Subnet, o.A, o.B)
			}
		}
		l.Subnet = p
		cfg.Links = append(cfg.Links, l)
	}
	return cfg, nil
}
