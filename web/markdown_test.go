package web

import (
	"strings"
	"testing"
)

func TestRenderMarkdownFormatsAndSanitises(t *testing.T) {
	got := string(renderMarkdown("# Rules\n\nBe **careful**.\n\n- one\n- two\n\n<script>alert(1)</script>\n\n[x](javascript:alert(1)) [ok](https://example.org/)"))
	for _, want := range []string{"<h1", "Rules</h1>", "<strong>careful</strong>", "<li>one</li>", `href="https://example.org/"`, `rel="nofollow noreferrer noopener"`} {
		if !strings.Contains(got, want) {
			t.Errorf("rendered guidelines lack %q:\n%s", want, got)
		}
	}
	for _, bad := range []string{"<script", "javascript:", "alert(1)</script"} {
		if strings.Contains(got, bad) {
			t.Errorf("rendered guidelines keep %q:\n%s", bad, got)
		}
	}
}
