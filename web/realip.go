package web

import (
	"net"
	"net/http"
	"strings"
)

// clientIP sets r.RemoteAddr to the client's address. Forwarded-address headers are
// believed only from a peer on this machine or a private network, where the proxy in front
// runs; from anyone else they are the client's own words, and believing them would let a
// guesser name a fresh address on every sign-in and escape the per-address limit. Of
// X-Forwarded-For the last entry counts: proxies append the address they saw, anything
// before it came from the client.
func clientIP(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		if ip := forwardedAddress(r); ip != "" {
			r.RemoteAddr = ip
		}
		next.ServeHTTP(w, r)
	})
}

func forwardedAddress(r *http.Request) string {
	host, _, err := net.SplitHostPort(r.RemoteAddr)
	if err != nil {
		host = r.RemoteAddr
	}
	peer := net.ParseIP(host)
	if peer == nil || !(peer.IsLoopback() || peer.IsPrivate()) {
		return ""
	}
	if xff := r.Header.Values("X-Forwarded-For"); len(xff) > 0 {
		list := strings.Split(xff[len(xff)-1], ",")
		if ip := net.ParseIP(strings.TrimSpace(list[len(list)-1])); ip != nil {
			return ip.String()
		}
		return ""
	}
	if ip := net.ParseIP(strings.TrimSpace(r.Header.Get("X-Real-IP"))); ip != nil {
		return ip.String()
	}
	return ""
}
