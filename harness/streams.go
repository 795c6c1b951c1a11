package harness

// mix is the SplitMix64 finaliser (Steele, Lea & Flood (2014), "Fast
// splittable pseudorandom number generators", OOPSLA): a bijection of
// uint64 with good avalanche, used to derive independent stream seeds.
func mix(z uint64) uint64 {
	z += 0x9e3779b97f4a7c15
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9
	z = (z ^ (z >> 27)) * 0x94d049bb133111eb
	return z ^ (z >> 31)
}

// Stream purposes: each kind of randomness of a replicate has its own
// stream, so that adding, say, a resampling estimator does not change the
// datasets.
const (
	purposeData      = 1
	purposeEstimator = 2
)

// ReplicateStream returns the two PCG seeds of the data stream of replicate
// rep of cell cell under the root seed: rand.NewPCG(ReplicateStream(...))
// regenerates exactly the dataset that replicate saw.
func ReplicateStream(seed uint64, cell, rep int) (uint64, uint64) {
	return streamSeeds(seed, cell, rep, purposeData, 0)
}

// EstimatorStream returns the PCG seeds of the stream given to estimator
// number est (in scenario order) for replicate rep of cell cell, for
// estimators that draw random numbers of their own.
func EstimatorStream(seed uint64, cell, rep, est int) (uint64, uint64) {
	return streamSeeds(seed, cell, rep, purposeEstimator, est)
}

func streamSeeds(seed uint64, cell, rep int, purpose uint64, sub int) (uint64, uint64) {
	h := mix(seed ^ mix(purpose))
	h = mix(h ^ uint64(cell))
	h = mix(h ^ uint64(rep))
	h = mix(h ^ uint64(sub))
	return h, mix(h ^ 0x5851f42d4c957f2d)
}
