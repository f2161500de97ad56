package agreement

import (
	"testing"

	"github.com/pertinent/pertinent/internal/reference"
)

// needReference returns the interpreter that has sklearn and statsmodels, failing under
// CI=true and skipping elsewhere when it does not.
func needReference(t testing.TB) string {
	t.Helper()
	return reference.RequirePython(t, "sklearn, statsmodels")
}
