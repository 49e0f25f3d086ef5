package report

import (
	"fmt"
	"math"
	"time"
	"unsafe"

	"parch/internal/ingest"
)

// A long table is decoded in batches of rows, on as many goroutines as
// there are cores, and put back together in the order of its lines: the
// decoding (times, numbers) is most of the cost of reading a table.

// batchRows is the number of rows in a batch;
var batchRows = 8192 // a variable so that a test can make batches of a few rows

// batch is a run of a table's rows: their text, and once decoded, their
// values.
type batch struct {
	text  []byte // the rows, one after another
	ends  []int  // where each row ends in text
	lines []int  // each row's line number
	rows  []decoded
	chans []float32 // the channel values, row after row
	done  chan struct{}
}

// decoded is one row as Decode gave it (or why not).
type decoded struct {
	t       time.Time
	elapsed time.Duration
	mass    float64
	stable  int8
	err     string // the row was not read: why
}

func (b *batch) add(line int, raw []byte) {
	b.text = append(b.text, raw...)
	b.ends = append(b.ends, len(b.text))
	b.lines = append(b.lines, line)
}

func (b *batch) full() bool { return len(b.ends) >= batchRows }

// decode decodes the batch's rows with tb (a table of this goroutine's own).
func (b *batch) decode(tb *ingest.Table) {
	nch := len(tb.Channels)
	b.rows = b.rows[:0]
	b.chans = b.chans[:0]
	from := 0
	for _, end := range b.ends {
		raw := b.text[from:end]
		from = end
		// The row is read in place: Decode keeps nothing of it once it
		// returns (its errors are formatted copies).
		row, err := tb.Decode(unsafe.String(&raw[0], len(raw)))
		if err != nil {
			b.rows = append(b.rows, decoded{err: err.Error()})
			for range nch {
				b.chans = append(b.chans, 0)
			}
			continue
		}
		b.rows = append(b.rows, decoded{t: row.Time, elapsed: row.Elapsed, mass: row.MassG, stable: row.Stable.Int8()})
		for _, v := range tb.ChannelValues {
			b.chans = append(b.chans, float32(v))
		}
	}
}

// decoders decode batches on workers goroutines; batches come back in the
// order they were submitted.
type decoders struct {
	work     chan *batch
	inFlight []*batch // submitted, in order
	free     []*batch
	workers  int
}

func newDecoders(tb *ingest.Table, workers int) *decoders {
	d := &decoders{work: make(chan *batch), workers: workers}
	for range workers {
		own := tb.Clone()
		go func() {
			for b := range d.work {
				b.decode(own)
				close(b.done)
			}
		}()
	}
	return d
}

// batch is an empty batch to fill.
func (d *decoders) batch() *batch {
	if n := len(d.free); n > 0 {
		b := d.free[n-1]
		d.free = d.free[:n-1]
		b.text, b.ends, b.lines = b.text[:0], b.ends[:0], b.lines[:0]
		b.done = make(chan struct{})
		return b
	}
	return &batch{done: make(chan struct{})}
}

// submit hands b to a worker and returns the batches done by now that
// must be taken in order, waiting when too many are in flight (memory
// stays a few batches, whatever the table's length).
func (d *decoders) submit(b *batch) []*batch {
	d.work <- b
	d.inFlight = append(d.inFlight, b)
	var out []*batch
	for len(d.inFlight) > 2*d.workers {
		out = append(out, d.next())
	}
	return out
}

// finish submits the last batch (it may be empty) and returns every batch
// still to take, in order; the workers end.
func (d *decoders) finish(b *batch) []*batch {
	if len(b.ends) > 0 {
		d.work <- b
		d.inFlight = append(d.inFlight, b)
	}
	close(d.work)
	var out []*batch
	for len(d.inFlight) > 0 {
		out = append(out, d.next())
	}
	return out
}

// stop ends the workers without taking their batches (an error).
func (d *decoders) stop() {
	if d != nil {
		close(d.work)
	}
}

func (d *decoders) next() *batch {
	b := d.inFlight[0]
	d.inFlight = d.inFlight[1:]
	<-b.done
	return b
}

// recycle returns a taken batch for reuse.
func (d *decoders) recycle(b *batch) { d.free = append(d.free, b) }

// assembler puts decoded rows into a Run's columns, in order: times in
// hours from the first row read, as the rows were read one by one.
type assembler struct {
	run   *Run
	names []string
	chans [][]float32 // by channel
	first bool
	t0    time.Time
	e0    time.Duration
}

func newAssembler(run *Run, tb *ingest.Table, n int) *assembler {
	a := &assembler{run: run, first: true, chans: make([][]float32, len(tb.Channels))}
	for _, c := range tb.Channels {
		a.names = append(a.names, c.Name)
	}
	run.Series.TimeH = make([]float64, 0, n)
	run.Series.Value = make([]float64, 0, n)
	run.Series.Stable = make([]int8, 0, n)
	for j := range tb.Channels {
		a.chans[j] = make([]float32, 0, n)
	}
	return a
}

// take appends a decoded batch; rows not read are added to skips.
func (a *assembler) take(b *batch, path string, skips []skip) []skip {
	run := a.run
	nch := len(a.chans)
	for k, row := range b.rows {
		if row.err != "" {
			skips = append(skips, skip{b.lines[k], fmt.Sprintf("%s: line %d skipped: %s", path, b.lines[k], row.err)})
			continue
		}
		if a.first {
			a.first = false
			a.t0, a.e0 = row.t, row.elapsed
			if !a.t0.IsZero() {
				run.Start = a.t0.UTC()
			}
		}
		var h float64
		if !row.t.IsZero() {
			h = row.t.Sub(a.t0).Hours()
			if run.TimesMs == nil { // clock times: kept for the record
				run.TimesMs = make([]int64, len(run.Series.TimeH), cap(run.Series.TimeH))
			}
		} else {
			h = (row.elapsed - a.e0).Hours()
		}
		if run.TimesMs != nil {
			var ms int64
			if !row.t.IsZero() {
				ms = row.t.UnixMilli()
			}
			run.TimesMs = append(run.TimesMs, ms)
		}
		run.Series.TimeH = append(run.Series.TimeH, h)
		run.Series.Value = append(run.Series.Value, row.mass)
		run.Series.Stable = append(run.Series.Stable, row.stable)
		for j, col := range a.chans {
			if col != nil {
				a.chans[j] = append(col, b.chans[k*nch+j])
			}
		}
	}
	return skips
}

// done puts the kept channels in the run, as long as its readings.
func (a *assembler) done() {
	n := len(a.run.Series.TimeH)
	for j, col := range a.chans {
		if col == nil {
			continue
		}
		for len(col) < n {
			col = append(col, float32(math.NaN()))
		}
		a.run.Channels[a.names[j]] = col
	}
}
