package textline

import (
	"errors"
	"io"
	"strings"
	"testing"
)

func TestNext(t *testing.T) {
	long := strings.Repeat("x", 300_000) // longer than the reader's buffer too
	r := NewReader(strings.NewReader("a,b\n"+long+"\n1,2\nlast"), 1000)
	var got []string
	for {
		line, skipped, err := r.Next()
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatal(err)
		}
		if skipped > 0 {
			got = append(got, "skipped line "+string(rune('0'+r.No)))
			if skipped != 300_001 {
				t.Errorf("skipped %d bytes, want 300001", skipped)
			}
			continue
		}
		got = append(got, strings.TrimRight(string(line), "\n"))
	}
	if want := "a,b|skipped line 2|1,2|last"; strings.Join(got, "|") != want {
		t.Errorf("lines %q, want %q", strings.Join(got, "|"), want)
	}
}

// A line with NUL bytes is reported, consumed, and reading goes on: a
// crash can leave a zero-filled tail, and the lines after it still count.
func TestBinary(t *testing.T) {
	r := NewReader(io.MultiReader(strings.NewReader("ok\n"), io.LimitReader(zeros{}, 300_000), strings.NewReader("\nafter\n")), 1000)
	var got []string
	for {
		line, _, err := r.Next()
		if err == io.EOF {
			break
		}
		if errors.Is(err, ErrBinary) {
			got = append(got, "binary")
			continue
		}
		got = append(got, strings.TrimSpace(string(line)))
	}
	if strings.Join(got, "|") != "ok|binary|after" {
		t.Errorf("lines %q", got)
	}
}

type zeros struct{}

func (zeros) Read(p []byte) (int, error) {
	clear(p)
	return len(p), nil
}
