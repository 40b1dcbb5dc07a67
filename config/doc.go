// Package config turns gridloupe's YAML file (and the environment it names,
// such as the host name and a password variable) into typed, validated
// settings.
//
// Every problem with a file's content is reported as an *Error naming the
// file, line, column and key path (for example channels[2].kind) and what is
// allowed; such errors wrap ErrInvalid. A file that cannot be read gives an
// error wrapping ErrRead. The package starts nothing: it opens no store,
// connects to no broker and reads no recording. It imports only the standard
// library and go.yaml.in/yaml/v3; it must not import the stream, store or
// metrics packages.
package config
