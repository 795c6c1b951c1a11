package external

import (
	"encoding/json"
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

func TestDecodeReply(t *testing.T) {
	for _, tc := range []struct {
		line       string
		err        string // part of the decode error; "" for none
		coefs      []float64
		hasCoefs   bool
		badCoef    int
		scale      float64
		hasScale   bool
		badScale   bool
		iterations int
		converged  bool
		status     string
		errMsg     string
	}{
		{line: `{"coefficients":[1.5,-2e-3],"scale":0.5,"iterations":4,"converged":true,"status":"converged"}`,
			coefs: []float64{1.5, -2e-3}, hasCoefs: true, badCoef: -1, scale: 0.5, hasScale: true, iterations: 4, converged: true, status: "converged"},
		{line: " { \"coefficients\" : [ 1 , 2 ] } \r", coefs: []float64{1, 2}, hasCoefs: true, badCoef: -1, converged: true},
		{line: `{"coefficients":[],"converged":false}`, hasCoefs: true, badCoef: -1},
		{line: `{}`, badCoef: -1, converged: true},
		{line: `{"coefficients":null,"scale":null,"iterations":null,"converged":null,"status":null,"error":null}`, badCoef: -1, converged: true},
		// Names are case-sensitive: this is another field, so there are no
		// coefficients.
		{line: `{"Coefficients":[1],"SCALE":2}`, badCoef: -1, converged: true},
		{line: `{"coefficients":[1,NaN,3]}`, coefs: []float64{1, math.NaN(), 3}, hasCoefs: true, badCoef: 1, converged: true},
		{line: `{"coefficients":[Infinity,-Infinity]}`, coefs: []float64{math.Inf(1), math.Inf(-1)}, hasCoefs: true, badCoef: 0, converged: true},
		{line: `{"coefficients":[1,-1e400]}`, coefs: []float64{1, math.Inf(-1)}, hasCoefs: true, badCoef: 1, converged: true},
		{line: `{"coefficients":[1,"NA","Inf"]}`, coefs: []float64{1, math.NaN(), math.Inf(1)}, hasCoefs: true, badCoef: 1, converged: true},
		{line: `{"coefficients":[1e-400]}`, coefs: []float64{0}, hasCoefs: true, badCoef: -1, converged: true},
		{line: `{"coefficients":[2],"scale":"NaN"}`, coefs: []float64{2}, hasCoefs: true, badCoef: -1, hasScale: true, badScale: true, scale: math.NaN(), converged: true},
		{line: `{"error":"singular \"design\"\n","coefficients":[1]}`, coefs: []float64{1}, hasCoefs: true, badCoef: -1, converged: true, errMsg: "singular \"design\"\n"},
		{line: `{"error":{"code":3}}`, badCoef: -1, converged: true, errMsg: `{"code":3}`},
		{line: `{"status":"\u00e9t\u00e9 \ud83d\ude00","coefficients":[0]}`, coefs: []float64{0}, hasCoefs: true, badCoef: -1, converged: true, status: "été 😀"},
		{line: `{"meta":{"a":[1,{"b":[null,true,false,"x\"}"]}],"c":-0.5e+3},"coefficients":[7]}`, coefs: []float64{7}, hasCoefs: true, badCoef: -1, converged: true},
		{line: `{"coefficients":[1],"coefficients":[2,3]}`, coefs: []float64{2, 3}, hasCoefs: true, badCoef: -1, converged: true},
		{line: ``, err: "JSON object"},
		{line: `[1,2]`, err: "JSON object"},
		{line: `{"coefficients":[1,2}`, err: "expected ',' or ']'"},
		{line: `{"coefficients":[1,]}`, err: "expected a number"},
		{line: `{"coefficients":[01]}`, err: "expected ',' or ']'"},
		{line: `{"coefficients":[1.]}`, err: "malformed number"},
		{line: `{"coefficients":[.5]}`, err: "expected a number"},
		{line: `{"coefficients":["1"]}`, err: `found the string "1"`},
		{line: `{"coefficients":{"a":1}}`, err: "array of numbers"},
		{line: `{"coefficients":[1]} x`, err: "text after"},
		{line: `{"coefficients":[1]}{}`, err: "text after"},
		{line: `{"scale":-1}`, err: "negative"},
		{line: `{"iterations":2.5}`, err: "whole number"},
		{line: `{"iterations":-1}`, err: "whole number"},
		{line: `{"converged":"yes"}`, err: "true or false"},
		{line: `{"status":3}`, err: "expected a string"},
		{line: `{"a":"unterminated}`, err: "unterminated"},
		{line: `{"a":"bad \x escape"}`, err: "unknown escape"},
		{line: "{\"a\":\"tab\tinside\"}", err: "control character"},
		{line: `{"a" 1}`, err: "expected ':'"},
		{line: `{"a":1 "b":2}`, err: "expected ',' or '}'"},
		{line: `{"a":` + strings.Repeat("[", 100) + strings.Repeat("]", 100) + `}`, err: "nested deeper"},
		{line: `{"a":tru}`, err: "expected a number"},
	} {
		var w wire
		err := decodeReply([]byte(tc.line), &w)
		if tc.err != "" {
			if err == nil || !strings.Contains(err.Error(), tc.err) {
				t.Errorf("%s: error %v, want one saying %q", tc.line, err, tc.err)
			}
			continue
		}
		if err != nil {
			t.Errorf("%s: %v", tc.line, err)
			continue
		}
		same := func(a, b float64) bool { return a == b || math.IsNaN(a) && math.IsNaN(b) }
		okCoefs := len(w.coefs) == len(tc.coefs)
		for j := 0; okCoefs && j < len(w.coefs); j++ {
			okCoefs = same(w.coefs[j], tc.coefs[j])
		}
		if !okCoefs || w.hasCoefs != tc.hasCoefs || w.badCoef != tc.badCoef || !same(w.scale, tc.scale) ||
			w.hasScale != tc.hasScale || w.badScale != tc.badScale || w.iterations != tc.iterations ||
			w.converged != tc.converged || w.status != tc.status || w.hasErr != (tc.errMsg != "") || w.errMsg != tc.errMsg && tc.errMsg != "" {
			t.Errorf("%s: decoded %+v", tc.line, w)
		}
	}
}

// TestDecodeReusesWire checks that a field absent from one reply does not
// keep the value of the previous reply.
func TestDecodeReusesWire(t *testing.T) {
	var w wire
	if err := decodeReply([]byte(`{"coefficients":[1,2],"scale":3,"iterations":4,"converged":false,"status":"s","error":"e"}`), &w); err != nil {
		t.Fatal(err)
	}
	if err := decodeReply([]byte(`{"coefficients":[5]}`), &w); err != nil {
		t.Fatal(err)
	}
	if len(w.coefs) != 1 || w.coefs[0] != 5 || w.hasScale || w.iterations != 0 || !w.converged || w.status != "" || w.hasErr {
		t.Errorf("second reply decoded as %+v", w)
	}
}

// FuzzDecodeReply checks that no line makes the decoder panic, and that
// on lines the standard library reads as an object whose field named
// exactly "coefficients" (the protocol's names are case-sensitive, where
// encoding/json's struct fields are not) is an array of numbers, both
// agree. As for a struct field, the last of repeated names counts.
func FuzzDecodeReply(f *testing.F) {
	for _, s := range []string{`{"coefficients":[1,2.5e-3],"scale":1}`, `{"error":"x"}`, `{"a":{"b":[null]}}`, `{"coefficients":[NaN]}`, `{"status":"\u00e9"}`} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, line string) {
		var w wire
		err := decodeReply([]byte(line), &w)
		var fields map[string]json.RawMessage
		if json.Unmarshal([]byte(line), &fields) != nil || strings.ContainsAny(line, "\n") {
			return
		}
		var std struct{ Coefficients []float64 }
		raw, ok := fields["coefficients"]
		if !ok || json.Unmarshal(raw, &std.Coefficients) != nil || std.Coefficients == nil {
			return
		}
		if err != nil {
			// We are stricter only about the protocol's own fields.
			if !strings.Contains(err.Error(), "scale") && !strings.Contains(err.Error(), "iterations") &&
				!strings.Contains(err.Error(), "converged") && !strings.Contains(err.Error(), "status") && !strings.Contains(err.Error(), "nested") {
				t.Fatalf("%q: standard library reads it, we say %v", line, err)
			}
			return
		}
		if len(w.coefs) != len(std.Coefficients) {
			t.Fatalf("%q: %v, standard library %v", line, w.coefs, std.Coefficients)
		}
		for j := range w.coefs {
			if w.coefs[j] != std.Coefficients[j] {
				t.Fatalf("%q: %v, standard library %v", line, w.coefs, std.Coefficients)
			}
		}
	})
}

func TestEncodeRequest(t *testing.T) {
	x := mat.NewDense(2, 2, []float64{1, 0.1, 1, -1e300})
	req := Request{Replicate: 3, X: x, Y: []float64{5e-324, math.Copysign(0, -1)}, Names: []string{"a\"\\\x01", "b\xff"}, Seed: math.MaxUint64}
	b, msg := appendRequest([]byte("prefix"), &req)
	want := `prefix{"replicate":3,"seed":18446744073709551615,"names":["a\"\\\u0001","b` + "\ufffd" + `"],"y":[5e-324,-0],"x":[[1,0.1],[1,-1e+300]]}` + "\n"
	if msg != "" || string(b) != want {
		t.Errorf("encoded %q (%s), want %q", b, msg, want)
	}
	var std fakeRequest
	if err := json.Unmarshal(b[len("prefix"):], &std); err != nil || std.Names[0] != "a\"\\\x01" || std.Seed != math.MaxUint64 || std.X[1][1] != -1e300 {
		t.Errorf("standard library reads %+v, %v", std, err)
	}
	for _, bad := range []Request{
		{X: x, Y: []float64{1}, Names: []string{"a", "b"}},
		{X: x, Y: []float64{1, 2}, Names: []string{"a"}},
		{Y: []float64{1, 2}, Names: []string{"a", "b"}},
		{X: mat.NewDense(2, 2, []float64{1, math.Inf(1), 1, 2}), Y: []float64{1, 2}, Names: []string{"a", "b"}},
	} {
		b, msg := appendRequest([]byte("keep"), &bad)
		if msg == "" || string(b) != "keep" {
			t.Errorf("request %+v encoded as %q (%q), want refused and the buffer unchanged", bad, b, msg)
		}
	}
}
