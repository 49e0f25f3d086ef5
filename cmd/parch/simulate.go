package main

import (
	"bufio"
	"context"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"os/signal"
	"syscall"
	"time"

	"parch/internal/report"
	"parch/internal/simulate"
)

func runSimulate(args []string, stdout, stderr io.Writer) error {
	fset := newFlagSet("simulate", "simulate [--out FILE.csv] [--seed N] [--speed X]", stderr)
	out := fset.String("out", "", "CSV `FILE` to write (default: standard output); never overwritten")
	seed := fset.Uint64("seed", 1, "random seed (the same seed gives the same run)")
	speed := fset.Float64("speed", 0, "write rows as the run goes, this many simulated seconds per real second (0: all at once)")
	sc := simulate.AppleRings()
	// The invented scenario's constants, each changeable to make other runs.
	fset.Float64Var(&sc.DurationH, "hours", sc.DurationH, "length of the run, h")
	fset.Float64Var(&sc.IntervalS, "interval", sc.IntervalS, "seconds between readings")
	fset.Float64Var(&sc.InitialMassG, "initial-mass", sc.InitialMassG, "product on the balance at the start, g")
	moisture := fset.Float64("initial-moisture", 100*sc.InitialMoistureWB, "initial moisture, % wet basis")
	fset.Float64Var(&sc.CriticalDB, "critical", sc.CriticalDB, "dry-basis moisture where the constant-rate period ends (at or above the initial moisture: none)")
	fset.Float64Var(&sc.EquilibriumDB, "equilibrium", sc.EquilibriumDB, "equilibrium moisture, dry basis")
	fset.Float64Var(&sc.ThicknessMM, "thickness", sc.ThicknessMM, "slice thickness, mm")
	fset.IntVar(&sc.Faces, "faces", sc.Faces, "drying faces: 1 solid tray, 2 mesh")
	fset.Float64Var(&sc.DiffusivityM2s, "diffusivity", sc.DiffusivityM2s, "effective diffusivity, m²/s")
	fset.Float64Var(&sc.NoiseG, "noise", sc.NoiseG, "balance noise (standard deviation), g")
	fset.Float64Var(&sc.AirTempC, "air-temp", sc.AirTempC, "air temperature setpoint, °C (the air_temp_c column)")
	noDoors := fset.Bool("no-doors", false, "no door openings")
	pos, err := parseFlags(fset, args)
	if err != nil {
		return err
	}
	if len(pos) > 0 {
		return usagef("unexpected argument %q (the file goes after --out)", pos[0])
	}
	if *speed < 0 {
		return usagef("--speed %v: expected 0 or a positive number", *speed)
	}
	sc.InitialMoistureWB = *moisture / 100
	if *noDoors {
		sc.Doors = nil
	}
	if sc.Faces != 1 && sc.Faces != 2 {
		return usagef("--faces %d: expected 1 or 2", sc.Faces)
	}
	if sc.NoiseG < 0 {
		return usagef("--noise %v: expected 0 or more", sc.NoiseG)
	}
	m, err := simulate.NewModel(sc)
	if err != nil {
		return usagef("%v", err)
	}
	w := stdout
	if *out != "" {
		f, err := os.OpenFile(*out, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o644)
		if errors.Is(err, fs.ErrExist) {
			return fmt.Errorf("%s already exists; parch does not overwrite it (choose another --out)", *out)
		}
		if err != nil {
			return err
		}
		defer f.Close()
		w = f
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	bw := bufio.NewWriter(w)
	// The last column marks every row as invented: the file is not a
	// measurement, and its report says so.
	fmt.Fprintf(bw, "elapsed_s,mass_g,stable,air_temp_c,%s\n", report.ChannelInvented)
	began := time.Now()
	var werr error
	m.Run(*seed, func(s simulate.Sample) bool {
		st := 0
		if s.Stable {
			st = 1
		}
		if _, werr = fmt.Fprintf(bw, "%g,%.2f,%d,%.1f,1\n", s.ElapsedS, s.MassG, st, s.AirTempC); werr != nil {
			return false
		}
		if *speed > 0 {
			if werr = bw.Flush(); werr != nil {
				return false
			}
			due := began.Add(time.Duration(s.ElapsedS / *speed * float64(time.Second)))
			select {
			case <-time.After(time.Until(due)):
			case <-ctx.Done():
				return false
			}
		}
		return true
	})
	if werr == nil {
		werr = bw.Flush()
	}
	if werr != nil {
		return fmt.Errorf("write %s: %w", *out, werr)
	}
	if *out != "" {
		fmt.Fprintf(stderr, "wrote %s: %s; dry mass %.2f g, constant-rate period ends at %.2f h, D %g m²/s (invented)\n",
			*out, sc.Name, m.DryMassG(), m.ConstantRateEndH(), sc.DiffusivityM2s)
	}
	return nil
}
