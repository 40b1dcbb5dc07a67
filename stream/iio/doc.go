// Package iio reads samples from a Linux Industrial I/O (IIO) ADC through
// its buffered interface: it finds the device under sysfs (by directory or
// by its name attribute), parses the scan elements' type strings, lays out
// a scan as the kernel does, enables the configured channels, sets the
// buffer length, enables the buffer, reads the character device, and
// converts raw counts to volts or amperes at the ADC input with the
// device's scale and offset attributes. Close disables the buffer and
// restores every _en file it changed. The sysfs and dev roots are
// configurable, so tests run on a fake tree in a temporary directory.
// Lost samples (a step of the timestamp element) are reported as
// *stream.Gap. It imports stream only for that type.
package iio
