package testcert

import (
	"crypto/ecdsa"
	"crypto/elliptic"
	"crypto/rand"
	"crypto/tls"
	"crypto/x509"
	"crypto/x509/pkix"
	"encoding/pem"
	"math/big"
	"net"
	"os"
	"path/filepath"
	"testing"
	"time"
)

// Set is a CA with one server and one client certificate, as PEM files.
type Set struct {
	CAFile, ServerCert, ServerKey, ClientCert, ClientKey string
}

// New writes a Set into a fresh t.TempDir.
func New(t testing.TB) Set {
	t.Helper()
	dir := t.TempDir()
	now := time.Now()
	caKey := key(t)
	ca := &x509.Certificate{
		SerialNumber: big.NewInt(1), Subject: pkix.Name{CommonName: "gridloupe test CA"},
		NotBefore: now.Add(-time.Hour), NotAfter: now.Add(24 * time.Hour),
		IsCA: true, BasicConstraintsValid: true, KeyUsage: x509.KeyUsageCertSign,
	}
	caDER, err := x509.CreateCertificate(rand.Reader, ca, ca, &caKey.PublicKey, caKey)
	if err != nil {
		t.Fatalf("testcert: CA: %v", err)
	}
	caCert, err := x509.ParseCertificate(caDER)
	if err != nil {
		t.Fatalf("testcert: CA: %v", err)
	}
	s := Set{CAFile: filepath.Join(dir, "ca.pem")}
	write(t, s.CAFile, "CERTIFICATE", caDER)
	leaf := func(name string, serial int64, usage x509.ExtKeyUsage, ips []net.IP) (string, string) {
		k := key(t)
		tmpl := &x509.Certificate{
			SerialNumber: big.NewInt(serial), Subject: pkix.Name{CommonName: name},
			NotBefore: now.Add(-time.Hour), NotAfter: now.Add(24 * time.Hour),
			KeyUsage: x509.KeyUsageDigitalSignature, ExtKeyUsage: []x509.ExtKeyUsage{usage}, IPAddresses: ips,
		}
		der, err := x509.CreateCertificate(rand.Reader, tmpl, caCert, &k.PublicKey, caKey)
		if err != nil {
			t.Fatalf("testcert: %s: %v", name, err)
		}
		kder, err := x509.MarshalECPrivateKey(k)
		if err != nil {
			t.Fatalf("testcert: %s key: %v", name, err)
		}
		cf, kf := filepath.Join(dir, name+".pem"), filepath.Join(dir, name+"-key.pem")
		write(t, cf, "CERTIFICATE", der)
		write(t, kf, "EC PRIVATE KEY", kder)
		return cf, kf
	}
	s.ServerCert, s.ServerKey = leaf("server", 2, x509.ExtKeyUsageServerAuth, []net.IP{net.IPv4(127, 0, 0, 1)})
	s.ClientCert, s.ClientKey = leaf("client", 3, x509.ExtKeyUsageClientAuth, nil)
	return s
}

// ServerTLS returns a server tls.Config with the server certificate.
func (s Set) ServerTLS(t testing.TB) *tls.Config {
	t.Helper()
	c, err := tls.LoadX509KeyPair(s.ServerCert, s.ServerKey)
	if err != nil {
		t.Fatalf("testcert: server pair: %v", err)
	}
	return &tls.Config{Certificates: []tls.Certificate{c}, MinVersion: tls.VersionTLS12}
}

func key(t testing.TB) *ecdsa.PrivateKey {
	t.Helper()
	k, err := ecdsa.GenerateKey(elliptic.P256(), rand.Reader)
	if err != nil {
		t.Fatalf("testcert: key: %v", err)
	}
	return k
}

func write(t testing.TB, path, typ string, der []byte) {
	t.Helper()
	if err := os.WriteFile(path, pem.EncodeToMemory(&pem.Block{Type: typ, Bytes: der}), 0o600); err != nil {
		t.Fatalf("testcert: %v", err)
	}
}
