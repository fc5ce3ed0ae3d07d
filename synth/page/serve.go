package page

import (
	"mime"
	"net/http"
)

func init() {
	// Types the standard table may lack, so browsers take the files as
	// what they are (audio/flac as RFC 9639 registers it; SFZ is text).
	for ext, kind := range map[string]string{".flac": "audio/flac", ".wav": "audio/wav", ".sfz": "text/plain; charset=utf-8"} {
		mime.AddExtensionType(ext, kind)
	}
}

// Handler serves the set's folder dir, the page and everything it loads,
// read only: net/http's file server, which refuses paths that climb out
// of its folder. It opens dir by name at each request rather than holding
// the folder open, since a render replaces the whole folder by a rename:
// the page then shows the new set at its next load. Responses are not
// cached for the same reason.
func Handler(dir string) http.Handler {
	files := http.FileServer(http.Dir(dir))
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		if r.Method != http.MethodGet && r.Method != http.MethodHead {
			http.Error(w, "the set's folder is read only", http.StatusMethodNotAllowed)
			return
		}
		w.Header().Set("Cache-Control", "no-store")
		w.Header().Set("X-Content-Type-Options", "nosniff")
		files.ServeHTTP(w, r)
	})
}
