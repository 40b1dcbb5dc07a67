package config

import (
	"errors"
	"net/netip"
	"strings"
)

// splitHostPort splits "host:port", "[host]:port" or ":port" into host
// and port, as net.SplitHostPort does (the same accepted forms: an IPv6
// literal with its colons needs brackets), so that config links no
// network stack (the offline executable imports config). Neither part is
// checked further: a hostname is resolved, and a port looked up, by
// whoever dials or listens.
func splitHostPort(hostport string) (host, port string, err error) {
	i := strings.LastIndexByte(hostport, ':')
	if i < 0 {
		return "", "", errors.New("missing port in address")
	}
	host, port = hostport[:i], hostport[i+1:]
	if strings.HasPrefix(host, "[") {
		if !strings.HasSuffix(host, "]") {
			return "", "", errors.New("missing ']' in address")
		}
		host = host[1 : len(host)-1]
	} else if strings.ContainsRune(host, ':') {
		return "", "", errors.New("too many colons in address")
	}
	if strings.ContainsAny(host, "[]") || strings.ContainsAny(port, "[]") {
		return "", "", errors.New("unexpected '[' or ']' in address")
	}
	return host, port, nil
}

// isLoopbackIP reports whether host is a literal loopback address
// (127.0.0.0/8, ::1, or 127.x written as IPv4-mapped IPv6).
func isLoopbackIP(host string) bool {
	ip, err := netip.ParseAddr(host)
	return err == nil && ip.Zone() == "" && ip.Unmap().IsLoopback()
}
