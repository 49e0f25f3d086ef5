// Package session is the session log: the record of a drying run on disk.
//
// The log is JSON Lines, append-only, one event per line. Every line has
// "type" and "t" (RFC 3339, UTC, milliseconds). The first line is a
// "session" header that marks the file as ours. Types:
//
//	session  header: format, version, the program that made it
//	reading  mass_g, stable (when the balance says), raw (the text as received),
//	         channels (named values such as air_temp_c)
//	note     kind, text, reading_t (the time of the latest reading when the
//	         note was made), value (grams removed, a new setpoint...)
//	setup    run parameters as keys (initial_moisture_wb_pct, dry_mass_g, ...);
//	         later values override earlier ones
//	source   event (started, stopped, lost, back, stalled, resumed, overload,
//	         underload, device_error, unparseable, line_cut, reopened, ...),
//	         detail, raw
//
// Writes are one write(2) per line on a file opened with O_APPEND, so several
// processes (a recorder and `parch note`) can append without interleaving;
// the file is fsync'd at least every second and on close. Reading back
// tolerates a torn last line (a crash mid-write) with a warning. The raw
// readings are the record: nothing here rewrites or truncates a log.
package session
