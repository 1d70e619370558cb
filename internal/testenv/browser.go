package testenv

import (
	"bufio"
	"bytes"
	"encoding/base64"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"os/exec"
	"strings"
	"sync"
	"testing"
	"time"
)

// A page loaded in a real headless browser: Debian's chromium, driven
// through the DevTools protocol over a pipe (--remote-debugging-pipe: JSON
// messages separated by NUL bytes on file descriptors 3 and 4), so no
// driver program or library is needed.

// ChromiumPath is where Debian's chromium package installs the browser.
const ChromiumPath = "/usr/bin/chromium"

// chromiumFlags are the flags a headless chromium needs on these machines:
// no sandbox as root, no GPU, and none of the background connections that
// a closed network refuses.
var chromiumFlags = []string{
	"--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
	"--disable-background-networking", "--disable-component-update", "--disable-sync",
	"--disable-dev-shm-usage", "--hide-scrollbars", "--remote-debugging-pipe",
}

// PageLoad is what a browser saw loading a page.
type PageLoad struct {
	// Errors are the console errors, uncaught exceptions, failed loads and
	// log entries of level error.
	Errors []string
	// Requests are the URLs the page asked for besides itself (data: URLs
	// excluded): a self-contained page asks for none.
	Requests []string
	// Images counts the page's <img> elements; BrokenImages those that did
	// not load or decode.
	Images, BrokenImages int
	// Title is the document's title.
	Title string
	// Screenshot is a PNG of the whole page at Width CSS pixels.
	Screenshot []byte
}

// LoadPage opens the file at path in headless chromium with a window
// width CSS pixels wide and reports what it saw. The test skips, saying
// so, when chromium is not installed; with CHORD_REQUIRE_BROWSER set (as
// .ci/run sets it, after installing chromium) it fails instead.
func LoadPage(t testing.TB, path string, width int) *PageLoad {
	t.Helper()
	bin := os.Getenv("CHORD_CHROMIUM")
	if bin == "" {
		bin = ChromiumPath
	}
	if _, err := os.Stat(bin); err != nil {
		if os.Getenv("CHORD_REQUIRE_BROWSER") != "" { // CI installs it: a missing browser there is a failure
			t.Fatalf("no headless browser at %s, and CHORD_REQUIRE_BROWSER is set", bin)
		}
		t.Skipf("no headless browser: %s is absent (install Debian's chromium package, as .ci/run does)", bin)
	}
	b, err := startBrowser(t, bin, width)
	if err != nil {
		t.Fatal(err)
	}
	defer b.close()
	res, err := b.load("file://"+path, width)
	if err != nil {
		t.Fatalf("chromium: %v\nits output:\n%s", err, b.stderr.String())
	}
	return res
}

type browser struct {
	cmd    *exec.Cmd
	in     io.WriteCloser // our writes: chromium's fd 3
	out    *bufio.Reader  // our reads: chromium's fd 4
	outF   *os.File
	stderr *lockedBuffer
	id     int
	events []cdpMessage
}

type cdpMessage struct {
	ID        int             `json:"id,omitempty"`
	Method    string          `json:"method,omitempty"`
	Params    json.RawMessage `json:"params,omitempty"`
	Result    json.RawMessage `json:"result,omitempty"`
	Error     *struct{ Message string }
	SessionID string `json:"sessionId,omitempty"`
}

type lockedBuffer struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (l *lockedBuffer) Write(p []byte) (int, error) {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.b.Write(p)
}

func (l *lockedBuffer) String() string {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.b.String()
}

func startBrowser(t testing.TB, bin string, width int) (*browser, error) {
	profile := t.TempDir() // a fresh profile each time
	args := append(append([]string(nil), chromiumFlags...), "--user-data-dir="+profile, fmt.Sprintf("--window-size=%d,900", width), "about:blank")
	cmd := exec.Command(bin, args...)
	toChrome, ours, err := os.Pipe() // chromium reads fd 3
	if err != nil {
		return nil, err
	}
	fromChrome, theirs, err := os.Pipe() // chromium writes fd 4
	if err != nil {
		return nil, err
	}
	cmd.ExtraFiles = []*os.File{toChrome, theirs}
	errBuf := &lockedBuffer{}
	cmd.Stderr = errBuf
	cmd.Stdout = errBuf
	if err := cmd.Start(); err != nil {
		return nil, fmt.Errorf("starting %s: %w", bin, err)
	}
	toChrome.Close()
	theirs.Close()
	return &browser{cmd: cmd, in: ours, out: bufio.NewReader(fromChrome), outF: fromChrome, stderr: errBuf}, nil
}

func (b *browser) close() {
	b.send("", "Browser.close", nil)
	b.in.Close()
	done := make(chan struct{})
	go func() { b.cmd.Wait(); close(done) }()
	select {
	case <-done:
	case <-time.After(10 * time.Second):
		b.cmd.Process.Kill()
		<-done
	}
	b.outF.Close()
}

// send writes a command and returns its id.
func (b *browser) send(session, method string, params any) (int, error) {
	b.id++
	msg := map[string]any{"id": b.id, "method": method}
	if params != nil {
		msg["params"] = params
	}
	if session != "" {
		msg["sessionId"] = session
	}
	data, err := json.Marshal(msg)
	if err != nil {
		return 0, err
	}
	_, err = b.in.Write(append(data, 0))
	return b.id, err
}

// read returns the next message, failing after the deadline.
func (b *browser) read(deadline time.Time) (cdpMessage, error) {
	b.outF.SetReadDeadline(deadline)
	data, err := b.out.ReadBytes(0)
	if err != nil {
		return cdpMessage{}, fmt.Errorf("reading from chromium: %w", err)
	}
	var m cdpMessage
	if err := json.Unmarshal(bytes.TrimSuffix(data, []byte{0}), &m); err != nil {
		return m, err
	}
	return m, nil
}

// call sends a command and waits for its result, keeping the events that
// arrive meanwhile.
func (b *browser) call(session, method string, params any, result any) error {
	id, err := b.send(session, method, params)
	if err != nil {
		return err
	}
	deadline := time.Now().Add(60 * time.Second)
	for {
		m, err := b.read(deadline)
		if err != nil {
			return fmt.Errorf("%s: %w", method, err)
		}
		if m.ID != id {
			if m.Method != "" {
				b.events = append(b.events, m)
			}
			continue
		}
		if m.Error != nil {
			return fmt.Errorf("%s: %s", method, m.Error.Message)
		}
		if result != nil {
			return json.Unmarshal(m.Result, result)
		}
		return nil
	}
}

// waitEvent waits for an event of the method, keeping the others.
func (b *browser) waitEvent(method string) error {
	for _, e := range b.events {
		if e.Method == method {
			return nil
		}
	}
	deadline := time.Now().Add(60 * time.Second)
	for {
		m, err := b.read(deadline)
		if err != nil {
			return fmt.Errorf("waiting for %s: %w", method, err)
		}
		if m.Method != "" {
			b.events = append(b.events, m)
		}
		if m.Method == method {
			return nil
		}
	}
}

func (b *browser) load(url string, width int) (*PageLoad, error) {
	var target struct{ TargetID string }
	if err := b.call("", "Target.createTarget", map[string]any{"url": "about:blank"}, &target); err != nil {
		return nil, err
	}
	var att struct{ SessionID string }
	if err := b.call("", "Target.attachToTarget", map[string]any{"targetId": target.TargetID, "flatten": true}, &att); err != nil {
		return nil, err
	}
	s := att.SessionID
	for _, domain := range []string{"Page", "Runtime", "Log", "Network"} {
		if err := b.call(s, domain+".enable", nil, nil); err != nil {
			return nil, err
		}
	}
	if err := b.call(s, "Emulation.setDeviceMetricsOverride", map[string]any{"width": width, "height": 900, "deviceScaleFactor": 1, "mobile": false}, nil); err != nil {
		return nil, err
	}
	b.events = b.events[:0]
	if err := b.call(s, "Page.navigate", map[string]any{"url": url}, nil); err != nil {
		return nil, err
	}
	if err := b.waitEvent("Page.loadEventFired"); err != nil {
		return nil, err
	}
	res := &PageLoad{}
	var eval struct {
		Result struct{ Value string }
	}
	js := `JSON.stringify({title: document.title, images: document.images.length,
		broken: Array.from(document.images).filter(i => !i.complete || i.naturalWidth === 0).length})`
	if err := b.call(s, "Runtime.evaluate", map[string]any{"expression": js, "returnByValue": true}, &eval); err != nil {
		return nil, err
	}
	var counts struct {
		Title          string
		Images, Broken int
	}
	if err := json.Unmarshal([]byte(eval.Result.Value), &counts); err != nil {
		return nil, fmt.Errorf("page state %q: %w", eval.Result.Value, err)
	}
	res.Title, res.Images, res.BrokenImages = counts.Title, counts.Images, counts.Broken
	var metrics struct {
		CSSContentSize struct{ Width, Height float64 } `json:"cssContentSize"`
	}
	if err := b.call(s, "Page.getLayoutMetrics", nil, &metrics); err != nil {
		return nil, err
	}
	var shot struct{ Data string }
	clip := map[string]any{"x": 0, "y": 0, "width": float64(width), "height": metrics.CSSContentSize.Height, "scale": 1}
	if err := b.call(s, "Page.captureScreenshot", map[string]any{"format": "png", "captureBeyondViewport": true, "clip": clip}, &shot); err != nil {
		return nil, err
	}
	png, err := base64.StdEncoding.DecodeString(shot.Data)
	if err != nil {
		return nil, err
	}
	res.Screenshot = png
	for _, e := range b.events {
		res.note(e, url)
	}
	return res, nil
}

// note records the errors and requests among the page's events.
func (r *PageLoad) note(e cdpMessage, self string) {
	switch e.Method {
	case "Runtime.consoleAPICalled":
		var p struct {
			Type string
			Args []struct {
				Value       any
				Description string
			}
		}
		json.Unmarshal(e.Params, &p)
		if p.Type == "error" || p.Type == "assert" {
			var parts []string
			for _, a := range p.Args {
				parts = append(parts, fmt.Sprint(a.Value, a.Description))
			}
			r.Errors = append(r.Errors, "console: "+strings.Join(parts, " "))
		}
	case "Runtime.exceptionThrown":
		r.Errors = append(r.Errors, "exception: "+string(e.Params))
	case "Log.entryAdded":
		var p struct {
			Entry struct{ Level, Text, URL string }
		}
		json.Unmarshal(e.Params, &p)
		if p.Entry.Level == "error" {
			r.Errors = append(r.Errors, "log: "+p.Entry.Text+" "+p.Entry.URL)
		}
	case "Network.loadingFailed":
		var p struct{ ErrorText string }
		json.Unmarshal(e.Params, &p)
		r.Errors = append(r.Errors, "load failed: "+p.ErrorText)
	case "Network.requestWillBeSent":
		var p struct{ Request struct{ URL string } }
		json.Unmarshal(e.Params, &p)
		if u := p.Request.URL; u != self && !strings.HasPrefix(u, "data:") {
			r.Requests = append(r.Requests, u)
		}
	}
}
