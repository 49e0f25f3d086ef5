package export

import (
	"encoding/csv"
	"io"
	"math"
	"sort"
	"strconv"
	"time"

	"parch/internal/kinetics"

	"parch/internal/safetext"
)

// ReadingsHeader is the fixed part of readings.csv's header; flux appears
// when the tray area is known, then one column per channel.
var ReadingsHeader = []string{"elapsed_h", "time", "mass_g", "net_mass_g", "moisture_wb_pct", "moisture_db", "moisture_ratio",
	"rate_g_per_h", "rate_per_h_db"}

// Readings writes readings.csv (RFC 4180): every reading as recorded, the
// values derived from it, and why it was left out of the analysis, if it was.
func Readings(w io.Writer, b *Bundle) error {
	cw := csv.NewWriter(w)
	p := &b.Res.Points
	flux := b.Setup.AreaM2 > 0
	header := append([]string(nil), ReadingsHeader...)
	if flux {
		header = append(header, "flux_kg_m2_h")
	}
	header = append(header, "rejected")
	var chans []string
	for name := range b.Run.Channels {
		chans = append(chans, name)
	}
	sort.Strings(chans)
	for _, c := range chans {
		header = append(header, safetext.Cell(c))
	}
	if err := cw.Write(header); err != nil {
		return err
	}
	mass := b.Res.MassKnown
	n := len(p.Reject)
	row := make([]string, len(header))
	for i := 0; i < n; i++ {
		row = row[:0]
		t := ""
		if i < len(b.Run.TimesMs) && b.Run.TimesMs[i] != 0 {
			t = time.UnixMilli(b.Run.TimesMs[i]).UTC().Format("2006-01-02T15:04:05.000Z07:00")
		}
		raw, net := math.NaN(), math.NaN()
		if mass {
			// mass_g as the balance gave it; net_mass_g after the tare, the
			// mass every moisture figure is computed from
			raw = b.Run.Series.Value[i]
			net = raw - b.Setup.TareG
		}
		row = append(row, num(b.Run.Series.TimeH[i], 6), t, num(raw, 4), num(net, 4), num(p.WBPct(i), 4), num(p.X(i), 6), num(p.MR(i), 6),
			num(massOnly(p.RateG(i), mass), 5), num(p.RateDB(i), 6))
		if flux {
			row = append(row, num(p.Flux(i), 6))
		}
		row = append(row, kinetics.RejectReason(p.Reject[i]))
		for _, c := range chans {
			row = append(row, num(float64(b.Run.Channels[c][i]), 4))
		}
		if err := cw.Write(row); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

func massOnly(v float64, mass bool) float64 {
	if !mass {
		return math.NaN()
	}
	return v
}

// Notes writes notes.csv: elapsed_h, time, kind, text (and the value a note
// carries, such as grams removed).
func Notes(w io.Writer, b *Bundle) error {
	cw := csv.NewWriter(w)
	cw.Write([]string{"elapsed_h", "time", "kind", "text", "value"})
	for _, n := range b.Run.Notes {
		cw.Write([]string{num(n.ElapsedH, 6), n.T.UTC().Format("2006-01-02T15:04:05.000Z07:00"), safetext.Cell(n.Kind), safetext.Cell(n.Text), num(n.Value, 6)})
	}
	cw.Flush()
	return cw.Error()
}

// num writes a number with up to prec decimals, empty when unknown.
func num(v float64, prec int) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return ""
	}
	return strconv.FormatFloat(v, 'f', prec, 64)
}
