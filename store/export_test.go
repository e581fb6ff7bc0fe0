package store

// PackedBins is packedBins, for the external tests.
var PackedBins = packedBins
