package export

import (
	"bytes"
	"os"
	"os/exec"
	"testing"
)

// refPython is the Debian interpreter that has the reference libraries;
// the python3 on PATH may be another one.
const refPython = "/usr/bin/python3"

// runPython runs script with /usr/bin/python3, feeding stdin, and returns
// its standard output. When the interpreter or the modules are missing the
// test fails under CI=true and is skipped otherwise.
func runPython(t *testing.T, modules, script string, stdin []byte) []byte {
	t.Helper()
	if err := exec.Command(refPython, "-c", "import "+modules).Run(); err != nil {
		msg := refPython + " with " + modules + " is needed for this reference check (Debian python3-sklearn): " + err.Error()
		if os.Getenv("CI") == "true" {
			t.Fatal(msg)
		}
		t.Skip(msg)
	}
	cmd := exec.Command(refPython, "-c", script)
	cmd.Stdin = bytes.NewReader(stdin)
	var out, errb bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &errb
	if err := cmd.Run(); err != nil {
		t.Fatalf("python: %v\n%s", err, errb.String())
	}
	return out.Bytes()
}
