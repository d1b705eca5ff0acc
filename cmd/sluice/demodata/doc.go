// Package demodata holds the invented instruction pool and target rows that sluice demo selects from.
package demodata
