// Package metricstest holds test fixtures shared by the packages that read
// metrics records (the Modbus and HTTP servers): a six-channel wye setup of
// the invented North Weir DC-2 cabinet (DESIGN.md scenario).
package metricstest
