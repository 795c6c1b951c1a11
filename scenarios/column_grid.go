package scenarios

// gridColumn is dist: grid, a fixed design of n equally spaced values from
// min to max.
type gridColumn struct{ min, max float64 }

func gridColumnKind() columnKind {
	return columnKind{
		name:   "grid",
		params: []columnParam{optional("min", 0), optional("max", 1)},
		fixed:  true,
		check:  checkRange,
		build:  func(d *Distribution) columnModel { return gridColumn{*d.Min, *d.Max} },
	}
}

func (m gridColumn) value(i, n int) float64 {
	if n == 1 {
		return m.min
	}
	return m.min + (m.max-m.min)*float64(i)/float64(n-1)
}

func (m gridColumn) appendSettings(e *settingsEncoder) {
	columnSettings(e, "grid", m.min, m.max, 0, nil)
}
