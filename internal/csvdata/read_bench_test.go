package csvdata

import (
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"testing"
)

// meterFile returns a CSV of 1,000 groups of 100 rows, a meter name and
// five numbers at full precision each, about 10 MB.
func meterFile() []byte {
	rng := rand.New(rand.NewPCG(14, 5))
	buf := []byte("meter,y,x1,x2,x3,x4\n")
	for g := 0; g < 1000; g++ {
		for i := 0; i < 100; i++ {
			buf = append(buf, "m"...)
			buf = strconv.AppendInt(buf, int64(g), 10)
			for j := 0; j < 5; j++ {
				buf = append(buf, ',')
				buf = strconv.AppendFloat(buf, rng.NormFloat64(), 'g', -1, 64)
			}
			buf = append(buf, '\n')
		}
	}
	return buf
}

// BenchmarkRead measures reading the 10 MB file of meterFile: from
// memory (the parse alone), and from a file, mapped (ReadFile) or read
// (Read).
func BenchmarkRead(b *testing.B) {
	data := meterFile()
	path := filepath.Join(b.TempDir(), "meters.csv")
	if err := os.WriteFile(path, data, 0o644); err != nil {
		b.Fatal(err)
	}
	b.Run("parse", func(b *testing.B) {
		s := string(data)
		b.SetBytes(int64(len(s)))
		b.ReportAllocs()
		for i := 0; i < b.N; i++ {
			if _, ok, err := readPlain("meters.csv", s); !ok || err != nil {
				b.Fatal(ok, err)
			}
		}
	})
	b.Run("groups", func(b *testing.B) {
		t, _, _ := readPlain("meters.csv", string(data))
		b.ReportAllocs()
		for i := 0; i < b.N; i++ {
			if _, err := t.Groups(0); err != nil {
				b.Fatal(err)
			}
		}
	})
	for _, c := range []struct {
		name string
		read func(*os.File) (*Table, error)
	}{
		{"mapped", func(f *os.File) (*Table, error) { return ReadFile(path, f) }},
		{"read", func(f *os.File) (*Table, error) { return Read(path, f) }},
	} {
		b.Run(c.name, func(b *testing.B) {
			b.SetBytes(int64(len(data)))
			b.ReportAllocs()
			for i := 0; i < b.N; i++ {
				f, err := os.Open(path)
				if err != nil {
					b.Fatal(err)
				}
				t, err := c.read(f)
				if err != nil {
					b.Fatal(err)
				}
				t.Close()
				f.Close()
			}
		})
	}
}
