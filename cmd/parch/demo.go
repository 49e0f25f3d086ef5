package main

import (
	"context"
	"fmt"
	"io"
	"os"
	"os/signal"
	"syscall"
	"time"

	"parch/internal/recorder"
)

func runDemo(args []string, stdout, stderr io.Writer) error {
	fs := newFlagSet("demo", "demo [--session FILE] [--seed N] [--speed X]", stderr)
	var src sourceFlags
	src.register(fs)
	status := fs.Duration("status", 2*time.Second, "how often to print a status line")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	if len(pos) > 0 {
		return usagef("unexpected argument %q", pos[0])
	}
	if src.port != "" || src.follow != "" {
		return usagef("demo runs the built-in invented run; for a balance or a file use 'parch record --port' or '--follow'")
	}
	src.demo = true
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	fmt.Fprintln(stdout, "demo: an invented run of apple rings on a mesh tray at 60 °C, 16 h shown in about 90 s (Ctrl-C stops)")
	return record(ctx, &src, *status, func(s recorder.Stats) string {
		if s.Readings == 0 {
			return "waiting for the first reading"
		}
		return demoStatus(s)
	}, stdout, stderr)
}

// demoStatus shows the simulated clock, since the demo runs fast.
func demoStatus(s recorder.Stats) string {
	el := s.LastT.Sub(s.FirstT)
	return fmt.Sprintf("elapsed %2d:%02d h  %6d readings  mass %7.2f g", int(el.Hours()), int(el.Minutes())%60, s.Readings, s.LastMassG)
}
