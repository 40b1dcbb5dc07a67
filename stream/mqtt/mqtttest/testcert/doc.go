// Package testcert writes a throw-away certificate authority, a server
// certificate for 127.0.0.1 and a client certificate for tests.
package testcert
