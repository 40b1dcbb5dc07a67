package config

import (
	"net"
	"testing"
)

// TestSplitHostPort: the forms net.SplitHostPort accepts and refuses
// (package net documentation: "host:port", "[host]:port", IPv6 literals
// in brackets), checked here because config no longer imports net.
func TestSplitHostPort(t *testing.T) {
	for _, c := range []struct {
		in, host, port string
		ok             bool
	}{
		{"127.0.0.1:5020", "127.0.0.1", "5020", true},     // package net documentation
		{"localhost:1883", "localhost", "1883", true},     // package net documentation
		{"[::1]:80", "::1", "80", true},                   // package net documentation
		{"[fe80::1%eth0]:80", "fe80::1%eth0", "80", true}, // package net documentation
		{":7001", "", "7001", true},                       // package net documentation
		{"0.0.0.0:", "0.0.0.0", "", true},                 // empty port: net accepts it; the callers refuse it
		{"localhost", "", "", false},                      // missing port
		{"::1:80", "", "", false},                         // too many colons
		{"[::1:80", "", "", false},                        // missing ']'
		{"[::1]x:80", "", "", false},                      // common practice, no source: junk after ']'
		{"a]:80", "", "", false},                          // unexpected ']'
		{"[a]:[80]", "", "", false},                       // unexpected '['
	} {
		h, p, err := splitHostPort(c.in)
		if (err == nil) != c.ok || h != c.host || p != c.port {
			t.Errorf("splitHostPort(%q) = %q, %q, %v; want %q, %q, ok %v", c.in, h, p, err, c.host, c.port, c.ok)
		}
	}
}

// TestIsLoopbackIP: loopback literals (RFC 1122 §3.2.1.3 for 127/8,
// RFC 4291 §2.5.3 for ::1) and not names, other addresses or junk.
func TestIsLoopbackIP(t *testing.T) {
	for in, want := range map[string]bool{
		"127.0.0.1": true, "127.9.9.9": true, "::1": true, "::ffff:127.0.0.1": true,
		"localhost": false, "0.0.0.0": false, "10.0.0.1": false, "::": false, "": false, "fe80::1%lo": false,
	} {
		if got := isLoopbackIP(in); got != want {
			t.Errorf("isLoopbackIP(%q) = %v, want %v", in, got, want)
		}
	}
}

// FuzzHostPort: splitHostPort and isLoopbackIP agree with package net's
// SplitHostPort and ParseIP(...).IsLoopback (the reference they replace;
// tests may link net, the executables need not) on every input.
func FuzzHostPort(f *testing.F) {
	for _, s := range []string{"127.0.0.1:5020", "[::1]:80", "localhost", "::1:80", "[::1:80", "a]:80", "[a]:[80]", ":7001",
		"[::ffff:127.0.0.1]:1", "[fe80::1%lo]:2", "127.000.0.1:3", "[[::1]]:4", "x:y:z"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		h, p, err := splitHostPort(s)
		nh, np, nerr := net.SplitHostPort(s)
		if (err == nil) != (nerr == nil) || (err == nil && (h != nh || p != np)) {
			t.Fatalf("splitHostPort(%q) = %q, %q, %v; net.SplitHostPort: %q, %q, %v", s, h, p, err, nh, np, nerr)
		}
		if got, want := isLoopbackIP(s), net.ParseIP(s).IsLoopback(); got != want {
			t.Fatalf("isLoopbackIP(%q) = %v, net.ParseIP(...).IsLoopback() = %v", s, got, want)
		}
	})
}
