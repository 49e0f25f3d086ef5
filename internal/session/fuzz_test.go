package session

import (
	"bytes"
	"math"
	"testing"
)

// FuzzDecode: the fast path either refuses a line or agrees with
// encoding/json on it.
func FuzzDecode(f *testing.F) {
	f.Add([]byte(`{"type":"reading","t":"2026-12-02T08:00:01.000Z","mass_g":123.45,"stable":true,"raw":"S S 123.45 g","channels":{"air_temp_c":60.1}}`))
	f.Add([]byte(`{"type":"note","t":"2026-12-02T08:00:01.000Z","kind":"note","text":"x"}`))
	f.Fuzz(func(t *testing.T, line []byte) {
		line = bytes.TrimRight(line, "\n")
		var d Decoder
		fastOK := d.fastReading(line)
		slow, err := decodeEvent(line)
		if !fastOK {
			return
		}
		if err != nil {
			t.Fatalf("fast path took a line encoding/json refuses: %q (%v)", line, err)
		}
		if slow.Type != TypeReading || slow.T.UnixMilli() != d.fast.TimeMs || (slow.MassG != d.fast.MassG && !(math.IsNaN(slow.MassG))) {
			t.Fatalf("fast %+v, slow %+v for %q", d.fast, slow, line)
		}
	})
}
