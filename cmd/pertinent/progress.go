package main

import (
	"io"
	"os"
	"time"

	"github.com/schollz/progressbar/v3"
	"golang.org/x/term"
)

// progressRedraw is how often a progress bar redraws at most: often enough to look alive,
// rarely enough that drawing costs nothing next to the work it shows.
const progressRedraw = 100 * time.Millisecond

// isTerminal tells whether w is a terminal, so pipes and log files get no control characters.
func isTerminal(w io.Writer) bool {
	f, ok := w.(*os.File)
	return ok && term.IsTerminal(int(f.Fd()))
}

// newProgressBar is every command's progress bar on w: total units, described by what,
// redrawn at most every progressRedraw and cleared when done.
func newProgressBar(w io.Writer, total int64, what string, opts ...progressbar.Option) *progressbar.ProgressBar {
	opts = append([]progressbar.Option{progressbar.OptionSetWriter(w), progressbar.OptionSetDescription(what),
		progressbar.OptionThrottle(progressRedraw), progressbar.OptionClearOnFinish()}, opts...)
	return progressbar.NewOptions64(total, opts...)
}
