package main

import (
	"bytes"
	"image/png"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"strings"
	"syscall"
	"testing"
	"time"

	"patina/assets/materials"
)

// relKills is the number of SIGKILLs per subcommand: a few by default, a
// few dozen with PATINA_SLOW=1.
func relKills() int {
	if os.Getenv("PATINA_SLOW") != "" {
		return 36
	}
	return 6
}

// relKillMoments returns n kill delays for a run that takes about d:
// deterministic (seeded), half spread over the whole run and half in its
// last fifth and just after, where the output is written and renamed.
func relKillMoments(seed uint64, n int, d time.Duration) []time.Duration {
	rng := rand.New(rand.NewPCG(seed, 0x9e3779b97f4a7c15))
	out := make([]time.Duration, n)
	for i := range out {
		f := rng.Float64() * 1.1
		if i%2 == 1 {
			f = 0.8 + rng.Float64()*0.3
		}
		out[i] = time.Duration(f * float64(d))
	}
	return out
}

// relKillTarget describes one subcommand under test: how to run it and
// how to tell a complete output.
type relKillTarget struct {
	name     string
	out      string            // output path
	first    []string          // args writing the previous version
	second   []string          // args writing the new version (killed)
	complete func([]byte) bool // a complete, readable output
}

// TestReliabilityKill kills `patina fit` and `patina render` with SIGKILL
// at seeded random moments while they would replace an existing complete
// output, and checks after each kill that the output is the previous
// complete version or the new complete one, never partial, and that
// nothing but `.NAME.tmp-*` siblings is left. A killed process cannot
// clean up, so a kill between creating the temporary sibling and the
// rename leaves that sibling behind: the test counts them, and a last
// run in the same directory must succeed without being confused by them.
func TestReliabilityKill(t *testing.T) {
	if runtime.GOOS == "windows" {
		t.Skip("SIGKILL semantics are POSIX")
	}
	bin := relBinary(t)
	dir := t.TempDir()
	capPath := relCaptureCopy(t, dir, 0)
	matPath := filepath.Join(dir, "given.json")
	if err := os.WriteFile(matPath, []byte(relMaterials), 0o644); err != nil {
		t.Fatal(err)
	}
	matOut := filepath.Join(dir, "materials.json")
	pngOut := filepath.Join(dir, "view.png")
	targets := []relKillTarget{
		{
			name:   "fit",
			out:    matOut,
			first:  []string{"fit", capPath, "-o", matOut, "-seed", "1", "-progress", "never"},
			second: []string{"fit", capPath, "-o", matOut, "-seed", "2", "-samples", "-1", "-progress", "never"},
			complete: func(b []byte) bool {
				f, err := materials.Parse(b, matOut)
				return err == nil && len(f.Segments) == 3 && f.Fit != nil
			},
		},
		{
			name:   "render",
			out:    pngOut,
			first:  []string{"render", capPath, "-materials", matPath, "-photo", "0", "-spp", "2", "-seed", "1", "-o", pngOut, "-progress", "never"},
			second: []string{"render", capPath, "-materials", matPath, "-photo", "0", "-spp", "48", "-seed", "2", "-o", pngOut, "-progress", "never"},
			complete: func(b []byte) bool {
				img, err := png.Decode(bytes.NewReader(b))
				return err == nil && img.Bounds().Dx() == 64 && img.Bounds().Dy() == 48
			},
		},
	}
	for ti, tg := range targets {
		t.Run(tg.name, func(t *testing.T) {
			runOK := func(args []string) time.Duration {
				t0 := time.Now()
				out, err := exec.Command(bin, args...).CombinedOutput()
				if err != nil {
					t.Fatalf("%v: %v\n%s", args, err, out)
				}
				return time.Since(t0)
			}
			// The new version, once, for the reference bytes (render is
			// deterministic, so a complete new PNG must equal these).
			d := runOK(tg.second)
			newRef, _ := os.ReadFile(tg.out)
			runOK(tg.first)
			old, err := os.ReadFile(tg.out)
			if err != nil || !tg.complete(old) {
				t.Fatalf("the previous version is not complete: %v", err)
			}
			n := relKills()
			var nOld, nNew, leftovers int
			for i, delay := range relKillMoments(uint64(100+ti), n, d) {
				cmd := exec.Command(bin, tg.second...)
				if err := cmd.Start(); err != nil {
					t.Fatal(err)
				}
				time.Sleep(delay)
				cmd.Process.Signal(syscall.SIGKILL)
				cmd.Wait()
				got, err := os.ReadFile(tg.out)
				switch {
				case err != nil:
					t.Fatalf("kill %d at %v: the output is gone: %v", i, delay, err)
				case bytes.Equal(got, old):
					nOld++
				case tg.complete(got) && (tg.name != "render" || bytes.Equal(got, newRef)):
					nNew++
					old = got // the new version is now the previous one
				default:
					t.Fatalf("kill %d at %v: the output is neither the previous nor a complete new version (%d bytes)", i, delay, len(got))
				}
				entries, _ := os.ReadDir(dir)
				leftovers = 0
				for _, e := range entries {
					name := e.Name()
					switch {
					case name == filepath.Base(tg.out), name == "capture.json", name == "given.json", name == "materials.json", name == "view.png":
					case strings.HasPrefix(name, "."+filepath.Base(tg.out)+".tmp-"):
						leftovers++
					case strings.HasPrefix(name, ".") && strings.Contains(name, ".tmp-"): // the other target's
					default:
						t.Errorf("kill %d: unexpected file %s", i, name)
					}
				}
			}
			// A later run is not confused by temporary siblings left behind.
			runOK(tg.second)
			got, _ := os.ReadFile(tg.out)
			if !tg.complete(got) {
				t.Errorf("the run after the kills wrote an incomplete output")
			}
			t.Logf("%s: %d kills over a %.2f s run: %d left the previous version, %d the new one; %d temporary siblings left behind", tg.name, n, d.Seconds(), nOld, nNew, leftovers)
		})
	}
}

// TestReliabilityWriteFails runs fit and render under a file-size limit
// (RLIMIT_FSIZE via the shell's ulimit -f; the write fails with EFBIG as
// it would with ENOSPC on a full disk) over an existing complete output:
// the command must fail with an error naming the file, leave the old file
// byte for byte, and remove its temporary sibling.
func TestReliabilityWriteFails(t *testing.T) {
	if runtime.GOOS == "windows" {
		t.Skip("ulimit -f is POSIX")
	}
	sh, err := exec.LookPath("sh")
	if err != nil {
		t.Skip("no sh")
	}
	bin := relBinary(t)
	dir := t.TempDir()
	capPath := relCaptureCopy(t, dir, 0)
	matPath := filepath.Join(dir, "given.json")
	if err := os.WriteFile(matPath, []byte(relMaterials), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct{ name, out string }{{"fit", "materials.json"}, {"render", "view.hdr"}} {
		out := filepath.Join(dir, c.out)
		args := []string{"fit", capPath, "-o", out, "-progress", "never"}
		if c.name == "render" {
			args = []string{"render", capPath, "-materials", matPath, "-photo", "1", "-spp", "1", "-o", out, "-progress", "never"}
		}
		if b, err := exec.Command(bin, args...).CombinedOutput(); err != nil {
			t.Fatalf("%v: %v\n%s", args, err, b)
		}
		old, _ := os.ReadFile(out)
		// ulimit -f counts 512- or 1024-byte blocks depending on the shell;
		// one block is far below either output.
		cmd := exec.Command(sh, append([]string{"-c", `ulimit -f 1 && exec "$0" "$@"`, bin}, args...)...)
		var stderr bytes.Buffer
		cmd.Stderr = &stderr
		err := cmd.Run()
		code := -1
		if ee, ok := err.(*exec.ExitError); ok {
			code = ee.ExitCode()
		}
		if err == nil || code != 1 {
			t.Errorf("%s under a file-size limit: %v (exit %d), want exit 1\n%s", c.name, err, code, stderr.String())
		}
		if msg := stderr.String(); !strings.Contains(msg, out) || !strings.Contains(msg, "file too large") {
			t.Errorf("%s: the error does not name the file and the cause: %q", c.name, msg)
		}
		if now, _ := os.ReadFile(out); !bytes.Equal(now, old) {
			t.Errorf("%s: the previous output changed (%d bytes, was %d)", c.name, len(now), len(old))
		}
		if left, _ := filepath.Glob(filepath.Join(dir, "."+c.out+".tmp-*")); len(left) > 0 {
			t.Errorf("%s: temporary siblings left after a failed write: %v", c.name, left)
		}
	}
}
