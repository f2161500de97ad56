// Package reference gives tests the outside tools they check pertinent against: Debian's
// Python with scikit-learn, statsmodels and SciPy. A missing tool fails the test when CI=true
// and skips it elsewhere, so CI can never pass by skipping a check.
package reference

import (
	"bytes"
	"os"
	"os/exec"
	"testing"
)

// Python is Debian's interpreter, which has the reference libraries; the python3 first on
// PATH may be another installation without them.
const Python = "/usr/bin/python3"

// Unavailable fails the test under CI=true and skips it elsewhere.
func Unavailable(t testing.TB, msg string) {
	t.Helper()
	if os.Getenv("CI") == "true" {
		t.Fatal(msg)
	}
	t.Skip(msg)
}

// RequirePython checks that Python imports the given modules ("sklearn, statsmodels").
func RequirePython(t testing.TB, modules string) string {
	t.Helper()
	if out, err := exec.Command(Python, "-c", "import "+modules).CombinedOutput(); err != nil {
		Unavailable(t, Python+" with "+modules+" is needed for this reference check "+
			"(Debian python3-sklearn, python3-statsmodels, python3-scipy): "+err.Error()+": "+string(out))
	}
	return Python
}

// RunPython runs a script with the given modules available, feeding stdin, and returns its
// standard output.
func RunPython(t testing.TB, modules, script string, stdin []byte) []byte {
	t.Helper()
	RequirePython(t, modules)
	cmd := exec.Command(Python, "-c", script)
	cmd.Stdin = bytes.NewReader(stdin)
	var out, errb bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &errb
	if err := cmd.Run(); err != nil {
		t.Fatalf("python: %v\n%s", err, errb.String())
	}
	return out.Bytes()
}
