package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"os/signal"
	"syscall"
	"time"

	"parch/internal/recorder"
	"parch/internal/report"
	"parch/internal/session"
)

func runRecord(args []string, stdout, stderr io.Writer) error {
	fs := newFlagSet("record", "record (--port DEVICE | --follow FILE | --demo) [--session FILE] [flags]", stderr)
	var src sourceFlags
	src.register(fs)
	var sf setupFlags
	sf.register(fs)
	status := fs.Duration("status", 10*time.Second, "how often to print a status line (0: never)")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	if len(pos) > 0 {
		return usagef("unexpected argument %q (the session file goes after --session)", pos[0])
	}
	params, err := sf.params()
	if err != nil {
		return err
	}
	base := map[string]float64{}
	if l, err := session.Load(src.session); err == nil && src.session != "" {
		base = l.SetupParams()
	}
	if err := sf.check(base); err != nil {
		return err
	}
	src.setup = params
	if src.reference, err = sf.referenceToRecord(); err != nil {
		return err
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	return record(ctx, &src, *status, func(s recorder.Stats) string { return statusLine(time.Now(), s) }, stdout, stderr)
}

// record runs a source into a session log until ctx ends or the source does.
func record(ctx context.Context, sf *sourceFlags, statusEvery time.Duration, status func(recorder.Stats) string, stdout, stderr io.Writer) error {
	now := time.Now()
	source, what, err := sf.build(now)
	if err != nil {
		return err
	}
	path := sf.session
	if path == "" {
		path = defaultSessionPath(now)
	}
	if earlier, err := session.Load(path); err == nil {
		resumeFollow(source, earlier)
	}
	log, reopened, err := session.CreateOrOpen(path, program, now)
	if err != nil {
		return err
	}
	if reopened {
		fmt.Fprintf(stdout, "appending to existing session log %s\n", path)
	} else {
		fmt.Fprintf(stdout, "recording %s into %s\n", what, path)
	}
	if len(sf.setup) > 0 || sf.reference != "" {
		p := anyMap(sf.setup)
		if sf.reference != "" {
			p[report.KeyReferenceFile] = sf.reference
		}
		if err := log.Append(&session.Event{Type: session.TypeSetup, T: now, Params: p}); err != nil {
			log.Close()
			return err
		}
	}
	rec := &recorder.Recorder{Log: log, Stall: sf.stall}
	runErr := rec.Run(ctx, source, statusEvery, func(s recorder.Stats) {
		fmt.Fprintln(stdout, status(s))
	})
	st := rec.Stats()
	if runErr != nil && !errors.Is(runErr, recorder.ErrSourceEnded) && st.Readings == 0 && !reopened && log.Err() == nil {
		// The source never started: drop the log we made a moment ago (it
		// holds only its header), so a typo leaves no litter.
		log.Close()
		os.Remove(path)
		return runErr
	}
	detail := "recording stopped"
	switch {
	case errors.Is(runErr, recorder.ErrSourceEnded):
		detail = "source ended"
	case runErr != nil:
		detail = "recording stopped: " + runErr.Error()
	}
	if log.Err() == nil {
		log.Append(&session.Event{Type: session.TypeSource, T: time.Now(), Event: session.SourceStopped, Detail: detail})
	}
	cerr := log.Close()
	fmt.Fprintf(stdout, "%s: %d readings in %s\n", detail, st.Readings, path)
	if runErr != nil && !errors.Is(runErr, recorder.ErrSourceEnded) {
		if errors.Is(runErr, session.ErrDiskFull) {
			return fmt.Errorf("%w (the %d readings written before are kept in %s)", runErr, st.Readings, path)
		}
		return runErr
	}
	return cerr
}

// statusLine is the one-line status `parch record` prints.
func statusLine(now time.Time, s recorder.Stats) string {
	line := fmt.Sprintf("%s  %d readings", now.Format("15:04:05"), s.Readings)
	if s.Readings > 0 {
		line += fmt.Sprintf("  last %.2f g  %s ago", s.LastMassG, now.Sub(s.LastSeen).Round(time.Second))
	} else {
		line += "  waiting for the first reading"
	}
	switch {
	case s.Lost:
		line += "  SOURCE LOST: " + s.LastProblem
	case s.Stalled:
		line += "  STALLED: " + s.LastProblem
	}
	if s.Unparseable > 0 {
		line += fmt.Sprintf("  %d unparseable lines", s.Unparseable)
	}
	return line
}
