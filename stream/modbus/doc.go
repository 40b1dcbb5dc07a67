// Package modbus serves the gateway's latest values to a building
// management system over Modbus TCP: read-only input registers (function
// 04) in a register map of gridloupe's own design, IEEE-754 float32 values
// in two registers with a configurable word order, uint16 registers for
// versions, flags and alarm bits. Every other function is refused with the
// illegal-function exception, every unmapped or split address with the
// illegal-data-address exception.
//
// Only this package imports the Modbus library. It reads the values from a
// live.Board and holds no electrical rules.
package modbus
