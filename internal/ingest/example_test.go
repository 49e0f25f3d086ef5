package ingest_test

import (
	"fmt"

	"parch/internal/ingest"
)

func ExampleParseLine() {
	for _, line := range []string{"S S     123.45 g", "US,NT,+0001.20kg", "  OL"} {
		l := ingest.ParseLine(line, ingest.Gram)
		fmt.Println(l.Kind, l.MassG, l.Stable)
	}
	// Output:
	// reading 123.45 stable
	// reading 1200 unstable
	// overload 0 unknown
}
