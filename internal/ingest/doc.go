// Package ingest turns what a balance or a logger produces into timed events:
// readings (mass in grams, stability, the raw text, named channels such as air
// temperature) and source events (lost, back, overload, unparseable lines...).
//
// It holds the pure line parser for balance output (ParseLine), the line
// splitter that joins fragments and caps line length (Splitter), the serial
// source (Serial), the CSV/TSV reader and the growing-file follower (Follow).
// Sources run until their context ends and hand batches of events to a
// channel, so a consumer repaints or writes once per batch, not once per line.
//
// Balances differ by maker; nothing here assumes one maker's format. The
// parser accepts an optional stability word or letter before or after the
// number, a sign, space or zero padding, a unit (mg, g, kg, oz, lb, ct, gn,
// with conversion to grams), comma or point decimals, and classifies
// overload, underload and error lines.
package ingest
