// Package live holds the gateway's latest values for the integration
// servers (Modbus TCP, Prometheus, the JSON endpoint and the status page):
// the newest 3 s and 10 min records, the active alarms, the energy and
// demand readings and the gateway's health, behind one lock, and the flat
// list of quantities (key path, unit, labels) those servers expose.
//
// It never computes a measurement (metrics does), never talks to a network
// (the server packages do) and never touches the store.
package live
