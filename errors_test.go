package pertinent

import (
	"errors"
	"fmt"
	"testing"
)

// The message shown to users never carries the package's prefix; the error string does, and
// the code survives wrapping.
func TestErrorKeepsMessageAndCodeThroughWrapping(t *testing.T) {
	e := Errorf(Invalid, "export", "split ratios add up to %g, not 1", 0.9)
	if e.Message != "split ratios add up to 0.9, not 1" {
		t.Errorf("message %q", e.Message)
	}
	if e.Error() != "export: split ratios add up to 0.9, not 1" {
		t.Errorf("error %q", e.Error())
	}
	wrapped := fmt.Errorf("planning: %w", e)
	if CodeOf(wrapped) != Invalid {
		t.Errorf("code %d through wrapping, want Invalid", CodeOf(wrapped))
	}
	if got, ok := AsError(wrapped); !ok || got != e {
		t.Errorf("AsError = %v, %v", got, ok)
	}
	if CodeOf(errors.New("disk full")) != 0 {
		t.Error("a plain error has a code")
	}
	if (&Error{Code: NotFound, Message: "not found"}).Error() != "not found" {
		t.Error("an error without a source is not its message")
	}
}
