package main

import (
	"bytes"
	"context"
	"strings"
	"testing"
)

func runCLI(t *testing.T, args ...string) (code int, stdout, stderr string) {
	t.Helper()
	var o, e bytes.Buffer
	code = run(context.Background(), args, &o, &e)
	return code, o.String(), e.String()
}

func TestHelpListsEveryCommand(t *testing.T) {
	code, out, _ := runCLI(t, "help")
	if code != 0 {
		t.Fatalf("exit %d", code)
	}
	for name, c := range commands {
		if !strings.Contains(out, "  "+name) || !strings.Contains(out, c.summary) {
			t.Errorf("help does not list %s", name)
		}
	}
	code, out, _ = runCLI(t, "help", "version")
	if code != 0 || !strings.Contains(out, "patina version") {
		t.Errorf("help version: exit %d, %q", code, out)
	}
}

func TestUnknownCommandSuggests(t *testing.T) {
	code, _, errOut := runCLI(t, "verison")
	if code != 2 || !strings.Contains(errOut, `did you mean "version"`) {
		t.Errorf("exit %d, stderr %q", code, errOut)
	}
}

func TestVersion(t *testing.T) {
	code, out, _ := runCLI(t, "version")
	if code != 0 || !strings.HasPrefix(out, "patina "+Version) || !strings.Contains(out, "revision") {
		t.Errorf("exit %d, %q", code, out)
	}
}
