package main

import (
	"bytes"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"
)

// relSyncBuffer is a bytes.Buffer safe for the writer goroutine of
// os/exec and the polling test.
type relSyncBuffer struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (s *relSyncBuffer) Write(p []byte) (int, error) {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.Write(p)
}

func (s *relSyncBuffer) String() string {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.String()
}

// relInterruptLimit is the bound on the time from SIGINT to exit that the
// test enforces. The goal is one second; the bound leaves room for a
// machine whose load is ten times its core count (the figure is logged).
const relInterruptLimit = 3 * time.Second

// TestReliabilitySIGINT starts fit, render, report, compare (rendering
// the photo's view) and demo as real processes,
// waits until each is working (its progress output has begun), sends
// SIGINT and checks: exit status 130, "interrupted" on stderr, the time
// to exit, no output file, and no temporary file left in the output
// directory.
func TestReliabilitySIGINT(t *testing.T) {
	if runtime.GOOS == "windows" {
		t.Skip("SIGINT delivery is POSIX")
	}
	bin := relBinary(t)
	dir := t.TempDir()
	// 60 extra copies of each fitting photo: a fit of several seconds.
	capPath := relCaptureCopy(t, dir, 60)
	matPath := filepath.Join(dir, "given.json")
	if err := os.WriteFile(matPath, []byte(relMaterials), 0o644); err != nil {
		t.Fatal(err)
	}
	outDir := filepath.Join(dir, "out")
	if err := os.Mkdir(outDir, 0o755); err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name    string
		args    []string
		started func(stdout, stderr string) bool
		output  string
	}{
		{"fit", []string{"fit", capPath, "-o", filepath.Join(outDir, "m.json"), "-samples", "-1", "-progress", "always"},
			func(_, e string) bool { return strings.Contains(e, "photos ") }, filepath.Join(outDir, "m.json")},
		{"render", []string{"render", capPath, "-materials", matPath, "-photo", "0", "-spp", "1000000", "-o", filepath.Join(outDir, "r.png"), "-progress", "always"},
			func(_, e string) bool { return strings.Contains(e, "spp") }, filepath.Join(outDir, "r.png")},
		{"report", []string{"report", capPath, "-materials", matPath, "-spp", "65536", "-o", filepath.Join(outDir, "r.html"), "-progress", "always"},
			func(_, e string) bool { return strings.Contains(e, "render 1/") }, filepath.Join(outDir, "r.html")},
		{"compare", []string{"compare", "-capture", capPath, "-photo-id", "0", "-materials", matPath, "-spp", "65536", "-o", filepath.Join(outDir, "c")},
			func(_, _ string) bool { return true }, filepath.Join(outDir, "c-deltae.png")},
		{"demo", []string{"demo", "-out", filepath.Join(outDir, "demo"), "-size", "small"},
			func(o, _ string) bool { return strings.Contains(o, "Making") }, ""},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			cmd := exec.Command(bin, c.args...)
			var stdout, stderr relSyncBuffer
			cmd.Stdout, cmd.Stderr = &stdout, &stderr
			if err := cmd.Start(); err != nil {
				t.Fatal(err)
			}
			done := make(chan error, 1)
			go func() { done <- cmd.Wait() }()
			deadline := time.Now().Add(60 * time.Second)
			for !c.started(stdout.String(), stderr.String()) {
				select {
				case err := <-done:
					t.Fatalf("finished before it could be interrupted: %v\n%s%s", err, stdout.String(), stderr.String())
				case <-time.After(20 * time.Millisecond):
				}
				if time.Now().After(deadline) {
					cmd.Process.Kill()
					t.Fatalf("did not start working within a minute:\n%s%s", stdout.String(), stderr.String())
				}
			}
			time.Sleep(500 * time.Millisecond) // well inside the work
			t0 := time.Now()
			if err := cmd.Process.Signal(syscall.SIGINT); err != nil {
				t.Fatal(err)
			}
			var err error
			select {
			case err = <-done:
			case <-time.After(30 * time.Second):
				cmd.Process.Kill()
				t.Fatalf("still running 30 s after SIGINT")
			}
			took := time.Since(t0)
			code := -1
			if ee, ok := err.(*exec.ExitError); ok {
				code = ee.ExitCode()
			} else if err == nil {
				code = 0
			}
			t.Logf("%s: exit %d %.3f s after SIGINT", c.name, code, took.Seconds())
			if code != 130 {
				t.Errorf("exit %d, want 130\n%s", code, stderr.String())
			}
			if !strings.Contains(stderr.String(), "interrupted") {
				t.Errorf("stderr does not say interrupted:\n%s", stderr.String())
			}
			if took > relInterruptLimit {
				t.Errorf("took %v to exit after SIGINT, bound %v", took, relInterruptLimit)
			}
			if c.output != "" {
				if _, err := os.Stat(c.output); err == nil {
					t.Errorf("an interrupted %s wrote %s", c.name, c.output)
				}
			}
			filepath.WalkDir(outDir, func(p string, d os.DirEntry, err error) error {
				if err == nil && strings.Contains(d.Name(), ".tmp-") {
					t.Errorf("temporary file left: %s", p)
				}
				return nil
			})
		})
	}
}
