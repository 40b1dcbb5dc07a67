package mqtt_test

import (
	"crypto/tls"
	"strings"
	"testing"

	"github.com/gridloupe/gridloupe/stream/mqtt"
	"github.com/gridloupe/gridloupe/stream/mqtt/mqtttest/testcert"
)

func TestTLSConfig(t *testing.T) {
	t.Parallel()
	c := testcert.New(t)
	junk := t.TempDir() + "/junk.pem"
	writeFile(t, junk, "not a certificate")
	tests := []struct {
		name, ca, cert, key string
		ok                  bool
		src                 string
	}{
		{"ca and client pair", c.CAFile, c.ClientCert, c.ClientKey, true, "crypto/tls: LoadX509KeyPair"},
		{"ca only", c.CAFile, "", "", true, "README, MQTT topics and payloads: client certificate optional"},
		{"nothing", "", "", "", true, "doc of TLSConfig: system roots"},
		{"junk ca", junk, "", "", false, "crypto/x509: AppendCertsFromPEM finds no certificate"},
		{"missing ca", c.CAFile + ".gone", "", "", false, "os.ReadFile"},
		{"cert without key", c.CAFile, c.ClientCert, "", false, "doc of TLSConfig: both or neither"},
		{"mismatched pair", c.CAFile, c.ClientCert, c.ServerKey, false, "crypto/tls: private key does not match public key"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			cfg, err := mqtt.TLSConfig(tc.ca, tc.cert, tc.key)
			if tc.ok != (err == nil) {
				t.Fatalf("TLSConfig: err %v, want ok=%v (%s)", err, tc.ok, tc.src)
			}
			if err != nil {
				return
			}
			if cfg.MinVersion != tls.VersionTLS12 {
				t.Errorf("MinVersion %x, want TLS 1.2 (doc of TLSConfig)", cfg.MinVersion)
			}
			if (tc.ca != "") != (cfg.RootCAs != nil) || (tc.cert != "") != (len(cfg.Certificates) == 1) {
				t.Errorf("roots %v, %d certificates", cfg.RootCAs != nil, len(cfg.Certificates))
			}
		})
	}
}

// TestTLSErrorsNameFiles: a refused file is named in the error, its
// contents never are (doc of TLSConfig: a key must not reach a log).
func TestTLSErrorsNameFiles(t *testing.T) {
	t.Parallel()
	c := testcert.New(t)
	junk := t.TempDir() + "/junk.pem"
	writeFile(t, junk, "not a certificate")
	for _, tc := range []struct{ ca, cert, key, name string }{
		{junk, "", "", junk},
		{c.CAFile, c.ClientCert, c.ServerKey, c.ServerKey},
	} {
		_, err := mqtt.TLSConfig(tc.ca, tc.cert, tc.key)
		if err == nil || !strings.Contains(err.Error(), tc.name) {
			t.Errorf("TLSConfig(%q, %q, %q): %v, want an error naming %s", tc.ca, tc.cert, tc.key, err, tc.name)
			continue
		}
		if strings.Contains(err.Error(), "not a certificate") || strings.Contains(err.Error(), "-----BEGIN") {
			t.Errorf("the error quotes the file: %v", err)
		}
	}
}
