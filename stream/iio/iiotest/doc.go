// Package iiotest builds fake IIO sysfs trees in a directory, as the
// kernel ABI (sysfs-bus-iio) lays them out, so that tests of package iio
// and of the command run without hardware. Test support only.
package iiotest
