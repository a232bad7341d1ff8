package server

import (
	"net/http"
	"slices"
	"strconv"
	"strings"
)

// cors is middleware for Cross-Origin Resource Sharing (Fetch Standard §3.2)
// with a configured list of origins, "*" standing for any. A request from an
// origin on the list gets Access-Control-Allow-Origin with that origin (and
// Vary: Origin, since the answer depends on it); a preflight OPTIONS request
// is answered here, before routing, with the methods and request headers the
// SPARQL routes take. Requests from other origins get no CORS headers, which
// makes the browser withhold the answer. Credentials (cookies) are never
// allowed: the routes authenticate with bearer tokens, which a page sends in
// an Authorization header it is allowed to set.
func cors(origins []string) func(http.Handler) http.Handler {
	anyOrigin := slices.Contains(origins, "*")
	allowed := func(origin string) bool { return anyOrigin || slices.Contains(origins, origin) }
	return func(next http.Handler) http.Handler {
		return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
			origin := r.Header.Get("Origin")
			if origin == "" || len(origins) == 0 {
				next.ServeHTTP(w, r)
				return
			}
			h := w.Header()
			h.Add("Vary", "Origin")
			preflight := r.Method == http.MethodOptions && r.Header.Get("Access-Control-Request-Method") != ""
			if !allowed(origin) {
				if preflight {
					w.WriteHeader(http.StatusNoContent)
					return
				}
				next.ServeHTTP(w, r)
				return
			}
			h.Set("Access-Control-Allow-Origin", origin)
			if !preflight {
				h.Set("Access-Control-Expose-Headers", strings.Join([]string{RequestIDHeader, "Retry-After", "Www-Authenticate"}, ", "))
				next.ServeHTTP(w, r)
				return
			}
			h.Add("Vary", "Access-Control-Request-Method")
			h.Add("Vary", "Access-Control-Request-Headers")
			h.Set("Access-Control-Allow-Methods", "GET, POST, OPTIONS")
			h.Set("Access-Control-Allow-Headers", "Accept, Authorization, Content-Type, "+RequestIDHeader)
			h.Set("Access-Control-Max-Age", strconv.Itoa(600))
			w.WriteHeader(http.StatusNoContent)
		})
	}
}
