package session

import (
	"bytes"
	"testing"
)

// FuzzReadTorn: a log whose lines are torn, interleaved, doubled or
// garbled reads back without a panic, and every whole reading line written
// before the damage is still read.
func FuzzReadTorn(f *testing.F) {
	f.Add([]byte(`{"type":"reading","t":"2026-12-02T08:00:09.000Z","mass_g":9`), uint16(3))
	f.Add([]byte(`{"type":"note","t":"2026-12-02T08:00:01.000Z","kind":"no{"type":"reading"`), uint16(0))
	f.Add([]byte("\x00\xff\n\n{}\n"), uint16(7))
	f.Fuzz(func(t *testing.T, junk []byte, at uint16) {
		var log bytes.Buffer
		log.WriteString(`{"type":"session","t":"2026-12-02T08:00:00.000Z","format":"parch-session","version":1}` + "\n")
		whole := []string{
			`{"type":"reading","t":"2026-12-02T08:00:01.000Z","mass_g":100}`,
			`{"type":"reading","t":"2026-12-02T08:00:02.000Z","mass_g":99.5,"stable":true}`,
			`{"type":"note","t":"2026-12-02T08:00:02.500Z","kind":"note","text":"x"}`,
		}
		for _, l := range whole {
			log.WriteString(l + "\n")
		}
		// The damage: junk spliced in at a point of the last line, as a
		// torn write followed by another writer's line would leave it.
		tail := []byte(`{"type":"reading","t":"2026-12-02T08:00:03.000Z","mass_g":99}` + "\n")
		cut := int(at) % (len(tail) + 1)
		log.Write(tail[:cut])
		log.Write(junk)
		log.Write(tail[cut:])
		l, err := Read(bytes.NewReader(log.Bytes()), "fuzz.jsonl")
		if err != nil {
			t.Fatalf("read: %v", err)
		}
		if l.Readings.Len() < 2 {
			t.Fatalf("%d readings: the two whole readings before the damage were lost", l.Readings.Len())
		}
	})
}
