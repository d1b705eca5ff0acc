// Package budget parses and adds up FLOP counts for data selection and training.
package budget
