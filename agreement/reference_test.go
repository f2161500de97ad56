package agreement

import (
	"os"
	"os/exec"
	"testing"
)

// refPython is the Debian interpreter that has sklearn and statsmodels.
const refPython = "/usr/bin/python3"

// needReference returns the interpreter path, or skips (fails under CI=true)
// when sklearn and statsmodels are not importable.
func needReference(t testing.TB) string {
	t.Helper()
	out, err := exec.Command(refPython, "-c", "import sklearn, statsmodels").CombinedOutput()
	if err != nil {
		msg := "reference libraries unavailable (" + refPython + " with sklearn and statsmodels; apt install python3-sklearn python3-statsmodels): " + err.Error() + ": " + string(out)
		if os.Getenv("CI") == "true" {
			t.Fatal(msg)
		}
		t.Skip(msg)
	}
	return refPython
}
