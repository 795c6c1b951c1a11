package external

import (
	"bufio"
	"bytes"
	"encoding/json"
	"fmt"
	"os"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"
)

// fakeMarker, as the first argument, makes the test binary act as an
// outside estimator (see runFake) instead of running the tests.
const fakeMarker = "rhomark-external-fake"

func TestMain(m *testing.M) {
	if len(os.Args) >= 4 && os.Args[1] == fakeMarker {
		trigger, err := strconv.Atoi(os.Args[3])
		if err != nil {
			fmt.Fprintln(os.Stderr, "fake: bad trigger:", err)
			os.Exit(2)
		}
		os.Exit(runFake(os.Args[2], trigger))
	}
	os.Exit(m.Run())
}

// fakeCommand returns the Command of the fake program in the given mode,
// misbehaving at replicate trigger.
func fakeCommand(t testing.TB, mode string, trigger int, timeout time.Duration) Command {
	t.Helper()
	exe, err := os.Executable()
	if err != nil {
		t.Fatal(err)
	}
	return Command{Label: "fake", Args: []string{exe, fakeMarker, mode, strconv.Itoa(trigger)}, Timeout: timeout}
}

// fakeRequest is a request as the fake program reads it, with the
// standard library's decoder, so that the tests check our encoder
// against it.
type fakeRequest struct {
	Replicate int         `json:"replicate"`
	Seed      uint64      `json:"seed"`
	Names     []string    `json:"names"`
	X         [][]float64 `json:"x"`
	Y         []float64   `json:"y"`
}

// echo returns the coefficients the fake program answers: Xᵀy, summed in
// row order, so that the tests can compute them bit for bit.
func echo(x [][]float64, y []float64) []float64 {
	c := make([]float64, len(x[0]))
	for i, row := range x {
		for j, v := range row {
			c[j] += v * y[i]
		}
	}
	return c
}

// instantReply is the reply of mode "instant", for p = 5.
const instantReply = `{"coefficients":[1.5,-0.25,3e-7,12345.678,0.1],"scale":0.9,"iterations":7,"status":"converged"}` + "\n"

// runFake is the fake program. Every mode answers a request with its
// echo reply (coefficients Xᵀy, scale seed/8, iterations n, status the
// last name, and an ignored nested field) except at replicate trigger,
// where it misbehaves as its mode says. Mode "instant" answers every line
// with instantReply without decoding it; "die-at-start" exits at once.
func runFake(mode string, trigger int) int {
	in := bufio.NewReaderSize(os.Stdin, 1<<20)
	out := bufio.NewWriter(os.Stdout)
	if mode == "die-at-start" {
		fmt.Fprintln(os.Stderr, "cannot load the meter model")
		return 2
	}
	for {
		line, err := in.ReadBytes('\n')
		if err != nil {
			return 0
		}
		if mode == "instant" {
			out.WriteString(instantReply)
			out.Flush()
			continue
		}
		var req fakeRequest
		if err := json.Unmarshal(line, &req); err != nil {
			fmt.Fprintln(os.Stderr, "fake: bad request:", err)
			return 3
		}
		coefs := echo(req.X, req.Y)
		reply := map[string]any{
			"coefficients": coefs,
			"scale":        float64(req.Seed) / 8,
			"iterations":   len(req.Y),
			"status":       req.Names[len(req.Names)-1],
			"note":         map[string]any{"a": []any{1, "x\"]}", map[string]any{"b": nil}}},
		}
		if mode == "chatter" {
			fmt.Fprintf(os.Stderr, "fitting replicate %d\npartial", req.Replicate)
			fmt.Fprintf(os.Stderr, " line %d\n", req.Replicate)
		}
		if mode == "cwd" {
			wd, _ := os.Getwd()
			reply["status"] = wd
		}
		text, _ := json.Marshal(reply)
		if req.Replicate == trigger {
			nums := func(first string) string {
				s := make([]string, len(coefs))
				for j, c := range coefs {
					s[j] = strconv.FormatFloat(c, 'g', -1, 64)
				}
				s[0] = first
				return `{"coefficients":[` + strings.Join(s, ",") + `]}`
			}
			switch mode {
			case "malformed":
				text = []byte(`{"coefficients": [1, 2,`)
			case "stdout-debug":
				text = []byte(`iteration 1: change 0.3`)
			case "no-coefficients":
				text = []byte(`{"scale": 1}`)
			case "wrong-length":
				text, _ = json.Marshal(map[string]any{"coefficients": coefs[1:]})
			case "nan":
				text = []byte(nums("NaN"))
			case "infinity":
				text = []byte(nums("-Infinity"))
			case "overflow":
				text = []byte(nums("1e999"))
			case "na-string":
				text = []byte(nums(`"NA"`))
			case "null-coefficient":
				text = []byte(nums("null"))
			case "error":
				text = []byte(`{"error": "design is singular", "status": "singular"}`)
			case "not-converged":
				text, _ = json.Marshal(map[string]any{"coefficients": coefs, "converged": false, "status": "iteration-limit"})
			case "silent":
				fmt.Fprintf(os.Stderr, "fake: going silent at replicate %d\n", req.Replicate)
				time.Sleep(time.Hour)
			case "exit":
				fmt.Fprintf(os.Stderr, "fake: stopping at replicate %d\n", req.Replicate)
				return 3
			case "half-line-exit":
				out.WriteString(`{"coefficients":[1,`)
				out.Flush()
				return 0
			}
		}
		out.Write(text)
		out.WriteByte('\n')
		out.Flush()
	}
}

// lineWriter is an io.Writer safe for concurrent use that remembers what
// was written and closes a channel when a line containing want arrives.
type lineWriter struct {
	mu   sync.Mutex
	buf  bytes.Buffer
	want string
	seen chan struct{}
	once sync.Once
}

// newLineWriter returns a lineWriter waiting for want.
func newLineWriter(want string) *lineWriter {
	return &lineWriter{want: want, seen: make(chan struct{})}
}

func (w *lineWriter) Write(b []byte) (int, error) {
	w.mu.Lock()
	defer w.mu.Unlock()
	if w.want != "" && bytes.Contains(b, []byte(w.want)) {
		w.once.Do(func() { close(w.seen) })
	}
	return w.buf.Write(b)
}

func (w *lineWriter) String() string {
	w.mu.Lock()
	defer w.mu.Unlock()
	return w.buf.String()
}
