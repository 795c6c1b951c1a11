package harness

import (
	"crypto/sha256"
	"encoding/binary"

	"github.com/rhomark/rhomark/scenarios"
)

// The stream contract. Every random number of a run comes from a stream
// whose seed is derived here, and nowhere else; a run, replay and
// breakdown draw a replicate through Replicator, which calls them.
//
//   - The dataset of replicate r of a cell is drawn from
//     ReplicateStream(seed, DataKey(generator), r). The data key hashes the
//     cell's resolved data-generating settings (model, noise,
//     contamination: Generator.AppendSettings), not the cell's number and
//     not its estimators, so cells that differ only in estimator settings
//     fit the same datasets, bit for bit, and cells whose data settings
//     differ draw from independent streams.
//   - An estimator that draws random numbers of its own (elemental
//     subsets) gets EstimatorStream(seed, data key, r, EstimatorKey(label)).
//     The estimator is identified by its label, which is the same in every
//     cell of a study, so the same estimator on the same dataset gets the
//     same stream in every cell and gives the same fit (which is what
//     allows the harness to compute it once), and an estimator whose
//     settings are swept draws the same subsets in every cell of a
//     dataset, which pairs those cells too. Adding or reordering
//     estimators changes neither the datasets nor the other estimators'
//     streams.
//   - MeasureBreakdown, which works on one given dataset, draws its
//     replaced rows and random directions from breakdownSearchStream(seed)
//     and gives every fit the stream breakdownFitStream(seed), seed being
//     its own (ReplacementOptions.Seed), not a run's.

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

// DataKey returns the key of a generator's data-generating settings: the
// first 8 bytes (little-endian) of the SHA-256 of
// Generator.AppendSettings. Generators with equal settings have equal keys.
func DataKey(g *scenarios.Generator) uint64 {
	sum := sha256.Sum256(g.AppendSettings(nil))
	return binary.LittleEndian.Uint64(sum[:8])
}

// EstimatorKey returns the key of the estimator labelled label: the first
// 8 bytes (little-endian) of the SHA-256 of the label.
func EstimatorKey(label string) uint64 {
	sum := sha256.Sum256([]byte(label))
	return binary.LittleEndian.Uint64(sum[:8])
}

// ReplicateStream returns the two PCG seeds of the data stream of replicate
// rep of the cells whose data key is dataKey, under the root seed:
// rand.NewPCG(ReplicateStream(...)) regenerates exactly the dataset that
// replicate saw.
func ReplicateStream(seed, dataKey uint64, rep int) (uint64, uint64) {
	return streamSeeds(seed, dataKey, rep, purposeData, 0)
}

// EstimatorStream returns the PCG seeds of the stream given to the
// estimator with key estKey (EstimatorKey of its label) for replicate rep
// of the data with key dataKey, for estimators that draw random numbers of
// their own.
func EstimatorStream(seed, dataKey uint64, rep int, estKey uint64) (uint64, uint64) {
	return streamSeeds(seed, dataKey, rep, purposeEstimator, estKey)
}

func streamSeeds(seed, key uint64, rep int, purpose, sub uint64) (uint64, uint64) {
	h := mix(seed ^ mix(purpose))
	h = mix(h ^ key)
	h = mix(h ^ uint64(rep))
	h = mix(h ^ sub)
	return h, mix(h ^ 0x5851f42d4c957f2d)
}

// breakdownSearchStream returns the PCG seeds of the stream from which
// MeasureBreakdown draws its random directions and then the order of the
// replaced rows, under its seed.
func breakdownSearchStream(seed uint64) (uint64, uint64) { return seed, 0xb7ea4d }

// breakdownFitStream returns the PCG seeds with which MeasureBreakdown
// seeds the estimator before every fit, so that a resampling estimator
// draws the same subsets for the clean and every contaminated dataset.
func breakdownFitStream(seed uint64) (uint64, uint64) { return seed, 0x5eed }
