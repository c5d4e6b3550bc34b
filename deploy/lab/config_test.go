package lab

import (
	"net/netip"
	"reflect"
	"testing"
)

func TestParse(t *testing.T) {
	good := "namespaces: [rw-rig, rw-relay, rw-ctl]\nlinks:\n" +
		"  - {a: rw-rig, b: rw-relay, subnet: 10.213.1.0/30}\n" +
		"  - {a: rw-relay, b: rw-ctl, subnet: 10.213.2.0/30}\n"
	got, err := Parse("lab.yaml", []byte(good))
	if err != nil {
		t.Fatal(err)
	}
	if want := Default(); !reflect.DeepEqual(got, want) {
		t.Errorf("the default topology written out parses as\n%+v\nwant\n%+v", got, want)
	}
	l := got.Links[0]
	if l.AddrA() != netip.MustParsePrefix("10.213.1.1/30") || l.AddrB() != netip.MustParsePrefix("10.213.1.2/30") {
		t.Errorf("addresses %s, %s; want 10.213.1.1/30, 10.213.1.2/30", l.AddrA(), l.AddrB())
	}
	if l.IfA() != "to-rw-relay" || l.IfB() != "to-rw-rig" {
		t.Errorf("interfaces %s, %s", l.IfA(), l.IfB())
	}
}

func TestParseBad(t *testing.T) {
	cases := []struct {
		name, in, want string
	}{
		{"unknown key", "namespaces: [a]\nlink: []\n",
			`lab.yaml:2: unknown key "link" (want one of: namespaces, links)`},
		{"no namespaces", "links: []\n",
			`lab.yaml:1: missing key "namespaces"`},
		{"bad name", "namespaces: [Rig]\n",
			`lab.yaml:1: namespaces[0]: want a name of 1 to 12 lowercase letters, digits or '-', got "Rig"`},
		{"name too long", "namespaces: [a-very-long-name]\n",
			`lab.yaml:1: namespaces[0]: want a name of 1 to 12 lowercase letters, digits or '-', got "a-very-long-name"`},
		{"twice", "namespaces: [a, a]\n",
			`lab.yaml:1: namespaces[1]: namespace "a" listed twice`},
		{"unknown end", "namespaces: [a, b]\nlinks:\n  - {a: a, b: c, subnet: 10.1.0.0/30}\n",
			`lab.yaml:3: links[0].b: want one of the namespaces listed, got "c"`},
		{"loop", "namespaces: [a, b]\nlinks:\n  - {a: a, b: a, subnet: 10.1.0.0/30}\n",
			`lab.yaml:3: links[0]: want two different namespaces, got "a" twice`},
		{"public subnet", "namespaces: [a, b]\nlinks:\n  - {a: a, b: b, subnet: 8.8.8.0/30}\n",
			`lab.yaml:3: links[0].subnet: want a private (RFC 1918) subnet, got "8.8.8.0/30"`},
		{"not a subnet", "namespaces: [a, b]\nlinks:\n  - {a: a, b: b, subnet: 10.1.0.1/30}\n",
			`lab.yaml:3: links[0].subnet: want an IPv4 subnet from /24 to /30 such as 10.213.1.0/30, got "10.1.0.1/30"`},
		{"overlap", "namespaces: [a, b, c]\nlinks:\n  - {a: a, b: b, subnet: 10.1.0.0/30}\n  - {a: b, b: c, subnet: 10.1.0.0/29}\n",
			`lab.yaml:4: links[1].subnet: subnet 10.1.0.0/29 overlaps 10.1.0.0/30 of link a–b`},
		{"same pair twice", "namespaces: [a, b]\nlinks:\n  - {a: a, b: b, subnet: 10.1.0.0/30}\n  - {a: b, b: a, subnet: 10.1.1.0/30}\n",
			`lab.yaml:4: links[1]: second link between "a" and "b"`},
		{"no subnet", "namespaces: [a, b]\nlinks:\n  - {a: a, b: b}\n",
			`lab.yaml:3: links[0]: missing key "subnet"`},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := Parse("lab.yaml", []byte(c.in))
			if err == nil {
				t.Fatalf("no error, want %s", c.want)
			}
			if err.Error() != c.want {
				t.Errorf("error\n%s\nwant\n%s", err, c.want)
			}
		})
	}
}
