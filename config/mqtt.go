package config

import (
	"fmt"
	"io"
	"os"
	"strings"
)

// maxPasswordBytes is MQTT's limit for a password field (MQTT 3.1.1
// §1.5.2: binary data with a two-byte length).
const maxPasswordBytes = 65535

// Password returns the MQTT password from PasswordFile (its trailing line
// breaks removed) or the environment variable PasswordEnv; "" with a nil
// error when neither is set. Errors wrap ErrRead and never hold the
// password. Safe for concurrent use.
func (m MQTT) Password() (string, error) {
	switch {
	case m.PasswordFile != "":
		f, err := os.Open(m.PasswordFile)
		if err != nil {
			return "", fmt.Errorf("%w: mqtt password_file: %w", ErrRead, err)
		}
		defer f.Close()
		b, err := io.ReadAll(io.LimitReader(f, maxPasswordBytes+3)) // room for a trailing CR LF
		if err != nil {
			return "", fmt.Errorf("%w: mqtt password_file: %w", ErrRead, err)
		}
		s := strings.TrimRight(string(b), "\r\n")
		if len(s) > maxPasswordBytes {
			return "", fmt.Errorf("%w: mqtt password_file %s: longer than %d bytes (MQTT's limit)", ErrRead, m.PasswordFile, maxPasswordBytes)
		}
		return s, nil
	case m.PasswordEnv != "":
		s, ok := os.LookupEnv(m.PasswordEnv)
		if !ok {
			return "", fmt.Errorf("%w: mqtt password_env: environment variable %s is not set", ErrRead, m.PasswordEnv)
		}
		if len(s) > maxPasswordBytes {
			return "", fmt.Errorf("%w: mqtt password_env %s: longer than %d bytes (MQTT's limit)", ErrRead, m.PasswordEnv, maxPasswordBytes)
		}
		return s, nil
	}
	return "", nil
}
