// Package refcheck runs the reference tools that Patina's tests cross-check
// against (Debian's python3-opencv, python3-skimage, python3-meshio, Node.js
// packages, Embree). It exists for tests only.
//
// Outside CI a missing tool skips the test with a message naming the package
// to install; under CI (environment CI=true) it fails the test, so a green CI
// run always means the cross-checks ran.
package refcheck

import (
	"bytes"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"strings"
	"sync"
	"testing"
)

// Python is the interpreter the cross-check scripts run with. Debian's
// packages are importable only from the system interpreter, not from a pyenv
// one that may come first on PATH.
const Python = "/usr/bin/python3"

// InCI reports whether missing reference tools must fail the test.
func InCI() bool { return os.Getenv("CI") == "true" || os.Getenv("CI") == "1" }

// Missing skips (or, under CI, fails) the test because a reference tool is
// missing; what names the tool and the package that provides it.
func Missing(t testing.TB, what string) {
	t.Helper()
	if InCI() {
		t.Fatalf("reference tool missing under CI: %s (run `make deps`)", what)
	}
	t.Skipf("reference tool missing: %s (run `make deps` to install it)", what)
}

var moduleCache sync.Map // module name -> error (nil when importable)

// RequirePython checks that the system Python can import every named module
// and otherwise calls Missing. debs maps each module to its Debian package
// for the message (e.g. "cv2": "python3-opencv").
func RequirePython(t testing.TB, modules map[string]string) {
	t.Helper()
	for mod, deb := range modules {
		v, ok := moduleCache.Load(mod)
		if !ok {
			var err error
			if _, e := os.Stat(Python); e != nil {
				err = e
			} else {
				out, e := exec.Command(Python, "-c", "import "+mod).CombinedOutput()
				if e != nil {
					err = fmt.Errorf("%v: %s", e, bytes.TrimSpace(out))
				}
			}
			moduleCache.Store(mod, err)
			v = err
		}
		if v != nil {
			Missing(t, fmt.Sprintf("Python module %s from Debian package %s (%v)", mod, deb, v))
		}
	}
}

// RunPython runs a Python script (source text) with the system interpreter
// and the given arguments, and returns its standard output. A failing script
// fails the test with its standard error.
func RunPython(t testing.TB, script string, args ...string) []byte {
	t.Helper()
	f := filepath.Join(t.TempDir(), "check.py")
	if err := os.WriteFile(f, []byte(script), 0o644); err != nil {
		t.Fatal(err)
	}
	cmd := exec.Command(Python, append([]string{f}, args...)...)
	var stdout, stderr bytes.Buffer
	cmd.Stdout, cmd.Stderr = &stdout, &stderr
	cmd.Env = append(os.Environ(), "PYTHONDONTWRITEBYTECODE=1", "OPENCV_IO_ENABLE_OPENEXR=0")
	if err := cmd.Run(); err != nil {
		t.Fatalf("reference script failed: %v\n%s", err, stderr.String())
	}
	return stdout.Bytes()
}

// RequireCommand checks that an executable is on PATH (or at an absolute
// path) and otherwise calls Missing; pkg names the package that provides it.
func RequireCommand(t testing.TB, name, pkg string) string {
	t.Helper()
	p, err := exec.LookPath(name)
	if err != nil {
		Missing(t, fmt.Sprintf("%s from package %s", name, pkg))
	}
	return p
}

// ModuleRoot returns the directory of the Go module (where go.mod is), so
// tests can find build/ and the npm packages that `make deps` installs.
func ModuleRoot(t testing.TB) string {
	t.Helper()
	_, file, _, _ := runtime.Caller(0)
	dir := filepath.Dir(file)
	for {
		if _, err := os.Stat(filepath.Join(dir, "go.mod")); err == nil {
			return dir
		}
		parent := filepath.Dir(dir)
		if parent == dir {
			t.Fatal("go.mod not found above " + file)
		}
		dir = parent
	}
}

// NodeModule returns the path of an npm package installed by `make deps`
// under build/npm/node_modules, or calls Missing.
func NodeModule(t testing.TB, name string) string {
	t.Helper()
	p := filepath.Join(ModuleRoot(t), "build", "npm", "node_modules", filepath.FromSlash(name))
	if _, err := os.Stat(p); err != nil {
		Missing(t, fmt.Sprintf("npm package %s (make deps installs it into build/npm)", name))
	}
	return p
}

// Fields splits a line of whitespace-separated output.
func Fields(b []byte) []string { return strings.Fields(string(b)) }
