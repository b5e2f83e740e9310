// Package ledger keeps the profile of every partition of a lake that a nightly job has seen, so
// each partition is read once: a JSON Lines file with one [Record] per partition, the partitions'
// saved sketches beside it, and a drift verdict comparing each new partition with the ones before.
//
// # Files
//
// For a ledger at LEDGER the package uses:
//
//	LEDGER              JSON Lines, one Record per partition, in the order they were profiled
//	LEDGER.lock         the lock file; held with flock(2) while a run reads and writes the ledger
//	LEDGER.sketches/    one sketch per partition, KEY=VALUE[/KEY=VALUE...].kgs
//
// # Partition states
//
// Records carry a status (done, incomplete, failed, quarantined); the latest record of a partition
// is its state. Only a done partition whose sketch exists is left alone; incomplete and failed
// ones are profiled again by the next run, quarantined ones are passed over until released.
// Partitions are profiled in key order and a failed one stops the run.
//
// # Crash safety
//
// A record is added by writing the whole new ledger (the earlier lines byte for byte, then the
// new one) to a temporary file in the same directory, syncing it and renaming it over LEDGER, so
// a reader sees the old ledger or the new one, never a part. A sketch is saved the same way and
// before its record, so a crash leaves at worst an unrecorded sketch, which is overwritten when
// the partition is profiled again. A temporary file left by a crash is removed (and reported) by
// the next run that holds the lock.
//
// A ledger written by another tool may end in a line without a newline. If that line is a
// complete record it is kept; if not it is an incomplete remnant of an interrupted write: it is
// reported (see [Ledger.Remnant]), left out of the records, and dropped at the next write, so its
// partition is profiled again. Any other line that is not a valid record is an error naming the
// file and the line number ([LineError]); such a ledger is never rewritten.
//
// # Locking
//
// [Lock] takes an exclusive flock(2) on LEDGER.lock, waiting up to a given time, so two runs on
// one ledger never interleave. [Track] resolves symbolic links to the ledger first, so the lock
// file is that of the real ledger whatever name a run was given. The lock file is never removed (removing it would let a third run
// lock a different file).
package ledger
