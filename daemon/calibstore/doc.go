// Package calibstore keeps every calibration version, the calibration
// points taken from live gauges, and an audit record of every change made
// with them, in the daemon's bbolt file beside the sample series.
//
// It owns the calibrations bucket and its layout; it must not poll gauges,
// fit curves (package calib does) or touch the sample series (package
// store does). Records are JSON so that a person can read them with any
// bbolt tool in an emergency.
//
// # Layout
//
//	calibrations/versions/<id>   Record, id = 4-byte big-endian uint32 (never 0)
//	calibrations/active/<gauge>  4-byte big-endian id of the gauge's active version
//	calibrations/points/<id>     Point, id = 8-byte big-endian uint64
//	calibrations/audit/<id>      Audit, id = 8-byte big-endian uint64
//
// At most one version is active per gauge: the active bucket maps a gauge
// to one id, and Activate rewrites that entry, the new version's record and
// the replaced version's record in one bbolt transaction, so a crash
// leaves either the old state or the new one. Id 0 is never used: stored
// samples carry 0 for "the instrument's own curve". Nothing is ever
// deleted: an unwanted point is marked excluded, a replaced version is
// marked retired, and each stays readable.
package calibstore
