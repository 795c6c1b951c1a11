package scenarios

import "testing"

func TestLibraryLoads(t *testing.T) {
	entries, err := Library()
	if err != nil {
		t.Fatal(err)
	}
	want := map[string]bool{"flow-meter": false, "clean-normal": false, "heavy-tails": false, "vertical-outliers": false, "bad-leverage": false}
	for _, e := range entries {
		if _, ok := want[e.Name]; ok {
			want[e.Name] = true
		}
		if e.About == "" {
			t.Errorf("%s: no about text", e.Name)
		}
		st, err := LoadLibrary(e.Name)
		if err != nil {
			t.Fatalf("%s: %v", e.Name, err)
		}
		if st.Base.Name != e.Name {
			t.Errorf("%s: name field is %q; it must match the file name", e.Name, st.Base.Name)
		}
		for _, c := range st.Cells {
			if _, err := NewGenerator(c.Scenario); err != nil {
				t.Errorf("%s cell %d: %v", e.Name, c.Index, err)
			}
		}
	}
	for name, found := range want {
		if !found {
			t.Errorf("shipped scenario %s missing", name)
		}
	}
}
