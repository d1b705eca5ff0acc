// Package chart draws the SVG charts of plans and run reports: one implementation of scales, ticks, frames, lines and markers.
package chart
