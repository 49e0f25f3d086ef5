package safetext

import "testing"

func TestTerminal(t *testing.T) {
	for _, tc := range []struct{ in, want string }{
		{"bend test passed", "bend test passed"},
		{"pomme, 2ème plateau", "pomme, 2ème plateau"},
		{"\x1b]0;title\x07", `\x1b]0;title\x07`},                                               // set the window title (xterm OSC 0)
		{"\x1b[2J", `\x1b[2J`},                                                                 // clear the screen (ECMA-48 ED)
		{"\x1b]8;;http://x\x1b\\link\x1b]8;;\x1b\\", `\x1b]8;;http://x\x1b\link\x1b]8;;\x1b\`}, // OSC 8 link
		{"\u009b2J", `\u009b2J`},                                                               // the one-byte CSI (C1)
		{"a\tb\nc", `a b\nc`},
		{"\xff\xfe", `\xff\xfe`},
		{"abc\u202edcba", `abc\u202edcba`}, // right-to-left override (Unicode TR #36)
	} {
		if got := Terminal(tc.in); got != tc.want {
			t.Errorf("Terminal(%q) = %q, want %q", tc.in, got, tc.want)
		}
	}
}

// Formulas are quoted as spreadsheet tools expect (OWASP, CSV injection).
func TestCell(t *testing.T) {
	for _, tc := range []struct{ in, want string }{
		{"=HYPERLINK(\"http://x\")", "'=HYPERLINK(\"http://x\")"},
		{"+1", "'+1"}, {"-2 g", "'-2 g"}, {"@sum", "'@sum"},
		{"soft, 3 of 12", "soft, 3 of 12"},
		{"", ""},
	} {
		if got := Cell(tc.in); got != tc.want {
			t.Errorf("Cell(%q) = %q, want %q", tc.in, got, tc.want)
		}
	}
}

func TestClip(t *testing.T) {
	if got := Clip("abcdef", 3); got != "abc... (6 bytes in all)" {
		t.Errorf("Clip = %q", got)
	}
	if got := Clip("é", 1); got != "... (2 bytes in all)" {
		t.Errorf("Clip at a rune = %q", got)
	}
}
