package ingest

import (
	"fmt"
	"math"
	"strconv"
	"unicode"
	"unicode/utf8"
)

// quote shows a value in a problem, cut short so one bad body cannot flood
// the list.
func quote(s string) string {
	const max = 40
	if len(s) > max {
		cut := max
		for cut > 0 && !utf8.RuneStart(s[cut]) {
			cut--
		}
		return strconv.Quote(s[:cut]) + "..."
	}
	return strconv.Quote(s)
}

// checkID returns why s cannot be an id, or "". Ids are single tokens so
// that qrels and run files, which split on whitespace, can carry them.
func checkID(s string) string {
	if s == "" {
		return "is empty"
	}
	for i, r := range s {
		if r == utf8.RuneError {
			if _, n := utf8.DecodeRuneInString(s[i:]); n == 1 {
				return "is not valid UTF-8"
			}
		}
		if unicode.IsControl(r) {
			return fmt.Sprintf("%s contains control character %U", quote(s), r)
		}
		if unicode.IsSpace(r) {
			return fmt.Sprintf("%s contains whitespace (ids must be one token)", quote(s))
		}
		// Zero-width spaces, byte order marks and direction marks make two ids that look
		// the same differ, so a pair or a qrel would silently miss its query or document.
		if unicode.Is(unicode.Cf, r) {
			return fmt.Sprintf("%s contains invisible character %U", quote(s), r)
		}
	}
	return ""
}

// checkText returns why s cannot be free text, or "". Tab, line feed and
// carriage return are the only control characters allowed.
func checkText(s string) string {
	for i := 0; i < len(s); {
		b := s[i]
		if b < utf8.RuneSelf {
			if (b < 0x20 && b != '\t' && b != '\n' && b != '\r') || b == 0x7f {
				return fmt.Sprintf("contains control character %U at byte %d", rune(b), i+1)
			}
			i++
			continue
		}
		r, n := utf8.DecodeRuneInString(s[i:])
		if r == utf8.RuneError && n == 1 {
			return fmt.Sprintf("is not valid UTF-8 at byte %d", i+1)
		}
		if r >= 0x80 && r <= 0x9f {
			return fmt.Sprintf("contains control character %U at byte %d", r, i+1)
		}
		i += n
	}
	return ""
}

func parseInt(s string) (int, string) {
	n, err := strconv.Atoi(s)
	if err != nil {
		if ne, ok := err.(*strconv.NumError); ok && ne.Err == strconv.ErrRange {
			return 0, quote(s) + " is out of range"
		}
		return 0, quote(s) + " is not an integer"
	}
	return n, ""
}

func parseFloat(s string) (float64, string) {
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		if ne, ok := err.(*strconv.NumError); ok && ne.Err == strconv.ErrRange {
			return 0, quote(s) + " is out of range"
		}
		return 0, quote(s) + " is not a number"
	}
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, quote(s) + " is not a finite number"
	}
	return v, ""
}

func checkGrade(g, scale int) string {
	if g < 0 || g >= scale {
		return fmt.Sprintf("grade %d is outside the scale 0..%d", g, scale-1)
	}
	return ""
}

func column(n int, name string) string { return fmt.Sprintf("column %d (%s)", n, name) }
