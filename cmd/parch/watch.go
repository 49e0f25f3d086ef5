package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"os/signal"
	"path/filepath"
	"syscall"
	"time"

	tea "github.com/charmbracelet/bubbletea"

	"parch/internal/export"
	"parch/internal/ingest"
	"parch/internal/kinetics"
	"parch/internal/recorder"
	"parch/internal/report"
	"parch/internal/session"
	"parch/tui"
)

func runWatch(args []string, stdout, stderr io.Writer) error {
	w, err := watchFlags("watch", "watch [--port DEVICE | --follow FILE | --demo] [--session FILE] [setup flags]", math.NaN(), math.NaN(), args, stderr)
	if err != nil {
		return err
	}
	return watch(w, stdout, stderr)
}

func runDemo(args []string, stdout, stderr io.Writer) error {
	w, err := watchFlags("demo", "demo [--session FILE] [--seed N] [--speed X] [setup flags]", 55, 65, args, stderr)
	if err != nil {
		return err
	}
	if w.src.port != "" || w.src.follow != "" {
		return usagef("demo runs the built-in invented run; for a balance or a file use 'parch watch --port' or '--follow'")
	}
	w.src.demo = true
	// The demo's invented apple rings: what an operator would have entered.
	w.setup.defaults = map[string]float64{report.KeyInitialMoistureWB: 86.5, report.KeyTargetWB: 18, report.KeyThickness: 6, report.KeyFaces: 2, report.KeyEquilibriumDB: 0.05}
	return watch(w, stdout, stderr)
}

// watchArgs are the dashboard's flags.
type watchArgs struct {
	src            sourceFlags
	setup          setupFlags
	airMin, airMax float64
}

func watchFlags(name, usage string, airMin, airMax float64, args []string, stderr io.Writer) (*watchArgs, error) {
	fs := newFlagSet(name, usage, stderr)
	w := &watchArgs{}
	w.src.register(fs)
	w.setup.register(fs)
	fs.Float64Var(&w.airMin, "air-min", airMin, "alert when the air temperature falls below this, °C")
	fs.Float64Var(&w.airMax, "air-max", airMax, "alert when the air temperature rises above this, °C")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return nil, err
	}
	if len(pos) > 0 {
		return nil, usagef("unexpected argument %q", pos[0])
	}
	if math.IsNaN(w.airMin) != math.IsNaN(w.airMax) {
		return nil, usagef("--air-min and --air-max go together")
	}
	return w, nil
}

// watch runs the dashboard: recording a source into the session log, or
// attached to a log another parch is recording.
func watch(wa *watchArgs, stdout, stderr io.Writer) error {
	src, sf := &wa.src, &wa.setup
	now := time.Now()
	hasSource := src.port != "" || src.follow != "" || src.demo
	if !hasSource && src.session == "" {
		return usagef("choose a source (--port DEVICE, --follow FILE or --demo), or --session FILE to watch a log being recorded")
	}
	flagParams, err := sf.params()
	if err != nil {
		return err
	}
	base := map[string]float64{}
	for k, v := range sf.defaults {
		base[k] = v
	}
	// A log being watched is read once: its setup here, its readings for
	// the dashboard below.
	var attached *session.Log
	if src.session != "" {
		// A long log takes a moment to read before the screen opens: say so.
		if st, err := os.Stat(src.session); err == nil && st.Size() > 16<<20 {
			fmt.Fprintf(stderr, "reading %s (%d MB)…\n", src.session, st.Size()>>20)
		}
		if l, err := session.Load(src.session); err == nil {
			attached = l
			for k, v := range l.SetupParams() {
				base[k] = v
			}
		}
	}
	if err := sf.check(base); err != nil {
		return err
	}
	more, err := sf.moreReferences()
	if err != nil {
		return err
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()

	opt := tui.Options{Stall: src.stall, AirLow: wa.airMin, AirHigh: wa.airMax, MoreReferences: more,
		Bell: func() { os.Stdout.Write([]byte("\a")) }}
	var finish func(runErr error) error
	setup := kinetics.NewSetup()

	if !hasSource {
		// Attach: follow the log; notes go in with single appends.
		if err := session.CheckHeader(src.session); err != nil {
			return err
		}
		log := attached
		if log == nil {
			if log, err = session.Load(src.session); err != nil {
				return err
			}
		}
		report.ApplyParams(&setup, log.SetupParams())
		report.ApplyParams(&setup, flagParams)
		refPath, err := sf.referenceToRecord()
		if err != nil {
			return err
		}
		if opt.Reference, opt.Notice, err = sf.loadReference(log.SetupText(report.KeyReferenceFile)); err != nil {
			return err
		}
		if len(flagParams) > 0 || refPath != "" {
			p := anyMap(flagParams)
			if refPath != "" {
				p[report.KeyReferenceFile] = refPath
			}
			if err := session.AppendOnce(src.session, &session.Event{Type: session.TypeSetup, T: now, Params: p}); err != nil {
				return err
			}
		}
		events := make(chan []ingest.Event, 4)
		// The dashboard takes what was read from the columns, and the
		// follower goes on from the end of it.
		f := &ingest.Follow{Path: src.session}
		if pos, ok := logEnd(src.session, log.End); ok {
			f.Resume, f.ResumeNote = pos, "from the end of what was read at the start"
			opt.Backlog = log
		}
		go func() {
			defer close(events)
			if err := f.Run(ctx, events); err != nil {
				events <- []ingest.Event{{T: time.Now(), Kind: ingest.KindWarning, Detail: err.Error()}}
			}
		}()
		opt.Events, opt.Notes, opt.Title = events, appendOnce(src.session), filepath.Base(src.session)+" · watching"
		finish = func(error) error { return nil }
	} else {
		source, what, err := src.build(now)
		if err != nil {
			return err
		}
		if f, ok := source.(*ingest.Follow); ok {
			f.WaitForFile = true // the dashboard says it is waiting, and follows the file when it comes
		}
		path := src.session
		if path == "" {
			path = defaultSessionPath(now)
			if src.demo {
				// The demo's log and record go with the user's data, not
				// into whatever folder (a source tree) it was started in.
				path = filepath.Join(demoDir(), path)
			}
		}
		var earlier *session.Log
		if _, err := os.Stat(path); err == nil {
			if earlier, err = session.Load(path); err != nil {
				return err
			}
			resumeFollow(source, earlier)
		}
		refPath, err := sf.referenceToRecord()
		if err != nil {
			return err
		}
		logParams, logRef := map[string]float64{}, ""
		if earlier != nil {
			logParams, logRef = earlier.SetupParams(), earlier.SetupText(report.KeyReferenceFile)
		}
		if opt.Reference, opt.Notice, err = sf.loadReference(logRef); err != nil {
			return err
		}
		w, _, err := session.CreateOrOpen(path, program, now)
		if err != nil {
			return err
		}
		// Defaults (the demo's), then what the log says, then the flags.
		report.ApplyParams(&setup, sf.defaults)
		report.ApplyParams(&setup, logParams)
		report.ApplyParams(&setup, flagParams)
		// Record what the log does not already say: defaults for keys it
		// lacks, and flags that change it.
		record := map[string]float64{}
		for k, v := range sf.defaults {
			if _, ok := logParams[k]; !ok {
				record[k] = v
			}
		}
		for k, v := range flagParams {
			if old, ok := logParams[k]; !ok || old != v {
				record[k] = v
			}
		}
		p := anyMap(record)
		if refPath != "" && refPath != logRef {
			p[report.KeyReferenceFile] = refPath
		}
		if len(p) > 0 {
			if err := w.Append(&session.Event{Type: session.TypeSetup, T: now, Params: p}); err != nil {
				w.Close()
				return err
			}
		}
		mb := recorder.NewMailbox()
		if earlier != nil {
			// The dashboard takes the earlier readings and notes from the
			// log's columns (a million events would take seconds); this
			// recording's own source states start afresh.
			backlog := *earlier
			backlog.Sources = nil
			opt.Backlog = &backlog
		}
		rec := &recorder.Recorder{Log: w, Stall: src.stall, OnBatch: mb.Put}
		recDone := make(chan error, 1)
		recCtx, cancelRec := context.WithCancel(ctx)
		go func() {
			err := rec.Run(recCtx, source, 0, nil)
			if err != nil {
				ev := ingest.Event{T: time.Now(), Kind: ingest.KindWarning, Detail: "source ended"}
				if !errors.Is(err, recorder.ErrSourceEnded) {
					// Said on the screen at once: readings are no longer kept.
					ev.Kind, ev.Detail = ingest.KindStopped, "recording stopped: "+err.Error()
				}
				mb.Put([]ingest.Event{ev})
			}
			mb.Close()
			recDone <- err
		}()
		// Notes and setup values other processes write into this log (parch
		// note from another shell) reach this dashboard too.
		go func() {
			evs := make(chan []ingest.Event, 4)
			go (&ingest.Follow{Path: path, Poll: 500 * time.Millisecond}).Run(recCtx, evs)
			for {
				select {
				case <-recCtx.Done():
					return
				case b := <-evs:
					var keep []ingest.Event
					for _, e := range b {
						if e.Kind == ingest.KindNote || e.Kind == ingest.KindSetup {
							keep = append(keep, e)
						}
					}
					if len(keep) > 0 {
						mb.Put(keep)
					}
				}
			}
		}()
		opt.Events, opt.Notes, opt.Recording, opt.Title = mb.Chan(), w, true, filepath.Base(path)+" · "+what
		if src.demo {
			opt.Title = "invented demo · " + filepath.Base(path) // said first: a narrow header shortens the end
		}
		finish = func(uiErr error) error {
			cancelRec()
			runErr := <-recDone
			detail := "recording stopped with the dashboard"
			if errors.Is(runErr, recorder.ErrSourceEnded) {
				detail, runErr = "source ended", nil
			} else if runErr != nil {
				detail = "recording stopped: " + runErr.Error()
			}
			if w.Err() == nil {
				w.Append(&session.Event{Type: session.TypeSource, T: time.Now(), Event: session.SourceStopped, Detail: detail})
			}
			cerr := w.Close()
			fmt.Fprintf(stdout, "%s: %d readings this time; session log %s\n", detail, rec.Stats().Readings, path)
			// The record of the run, next to the log.
			if cerr == nil {
				dir := exportFolder(path)
				if b, err := analyse(path, ingest.TableOptions{}, sf, math.NaN(), func(string) {}); err != nil {
					fmt.Fprintf(stdout, "no report folder: %v\n", err)
				} else if err := export.Write(dir, false, b, nil); err != nil {
					fmt.Fprintf(stdout, "no report folder: %v\n", err)
				} else {
					fmt.Fprintf(stdout, "report: %s (parch report %s --out DIR re-makes it with a corrected setup)\n", dir, path)
				}
			}
			if runErr != nil {
				return runErr
			}
			return cerr
		}
	}
	opt.Setup = setup
	p := tea.NewProgram(tui.New(opt), tea.WithAltScreen(), tea.WithContext(ctx))
	_, uiErr := p.Run()
	if errors.Is(uiErr, tea.ErrProgramKilled) || errors.Is(uiErr, context.Canceled) {
		uiErr = nil
	}
	ferr := finish(uiErr)
	if uiErr != nil {
		return uiErr
	}
	return ferr
}

// logEnd is the position just past what a log read back held, for a
// follower to go on from (false when it cannot be taken).
func logEnd(path string, end int64) (*ingest.Position, bool) {
	if end <= 0 {
		return nil, false
	}
	f, err := os.Open(path)
	if err != nil {
		return nil, false
	}
	defer f.Close()
	tail := make([]byte, min(end, 32))
	if n, _ := f.ReadAt(tail, end-int64(len(tail))); n != len(tail) {
		return nil, false
	}
	return &ingest.Position{File: path, Offset: end, Tail: tail}, true
}

func anyMap(m map[string]float64) map[string]any {
	out := make(map[string]any, len(m))
	for k, v := range m {
		out[k] = v
	}
	return out
}

// appendOnce writes notes to a log another process records.
type appendOnce string

func (a appendOnce) Append(e *session.Event) error { return session.AppendOnce(string(a), e) }

// demoDir is where `parch demo` keeps its session logs and records:
// $XDG_DATA_HOME/parch/demo (~/.local/share/parch/demo), or the temporary
// folder when there is no home.
func demoDir() string {
	base := os.Getenv("XDG_DATA_HOME")
	if base == "" {
		if home, err := os.UserHomeDir(); err == nil {
			base = filepath.Join(home, ".local", "share")
		}
	}
	dir := filepath.Join(base, "parch", "demo")
	if base == "" || os.MkdirAll(dir, 0o755) != nil {
		dir = filepath.Join(os.TempDir(), "parch-demo")
		os.MkdirAll(dir, 0o755)
	}
	return dir
}
