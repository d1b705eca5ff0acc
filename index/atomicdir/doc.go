// Package atomicdir publishes a finished folder in place of an older one so that a crash at any moment
// leaves either the old folder or the new one, never a half-written mix.
package atomicdir
