package mqtt

import (
	"crypto/tls"
	"crypto/x509"
	"fmt"
	"os"
)

// TLSConfig builds the client TLS settings for an ssl:// broker. caFile
// (PEM) replaces the system roots when given; certFile and keyFile (PEM)
// are the client certificate and key, both or neither. TLS 1.2 is the
// minimum. Errors name the file but never include its contents.
func TLSConfig(caFile, certFile, keyFile string) (*tls.Config, error) {
	c := &tls.Config{MinVersion: tls.VersionTLS12}
	if caFile != "" {
		pem, err := os.ReadFile(caFile)
		if err != nil {
			return nil, fmt.Errorf("mqtt: tls ca: %w", err)
		}
		pool := x509.NewCertPool()
		if !pool.AppendCertsFromPEM(pem) {
			return nil, fmt.Errorf("mqtt: tls ca %s: no PEM certificate: %w", caFile, ErrTLS)
		}
		c.RootCAs = pool
	}
	if (certFile == "") != (keyFile == "") {
		return nil, fmt.Errorf("mqtt: tls cert %q and key %q: give both or neither: %w", certFile, keyFile, ErrTLS)
	}
	if certFile != "" {
		cert, err := tls.LoadX509KeyPair(certFile, keyFile)
		if err != nil {
			return nil, fmt.Errorf("mqtt: tls cert %s, key %s: %w: %w", certFile, keyFile, ErrTLS, err)
		}
		c.Certificates = []tls.Certificate{cert}
	}
	return c, nil
}
