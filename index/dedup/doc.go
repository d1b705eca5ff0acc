// Package dedup finds exact duplicates (by a hash of normalised text) and near duplicates (by MinHash signatures and locality-sensitive hashing) among rows, and keeps one row per cluster.
package dedup
