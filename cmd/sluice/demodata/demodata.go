package demodata

import _ "embed"

// The files are embedded as strings, which are immutable, so callers can
// never change the data another caller sees.
var (
	//go:embed pool.jsonl
	pool string
	//go:embed target.jsonl
	target string
	//go:embed eval.jsonl
	eval string
)

// Scenario describes the invented setting of the demo data.
const Scenario = "The volunteer-run Kestrel Haven Ferry Cooperative, which links a small harbour town with six nearby islands, wants a small assistant for its dispatch desk: timetables, delay notices, fares, group bookings, lost property and boat swaps. " +
	"Its volunteers have pooled several hundred instruction examples on everything they do, from engines, tides and weather to baking, club accounts, gardening, bedtime stories, spreadsheets, first aid and knots, with repeats and a few rows that mix two subjects. " +
	"Forty freshly written dispatch-desk examples are the target, and the task is to keep only the pool rows worth training on."

// TargetTopic is the topic label of the target rows. Pool rows carry it too
// when they are on the target task; rows that mix two topics are labelled
// "a+b", for example "dispatch+weather".
const TargetTopic = "dispatch"

// Pool returns a fresh copy of pool.jsonl: one JSON object per line with the
// fields id ("pool-0001"...), instruction, input, output and topic.
func Pool() []byte { return []byte(pool) }

// Eval returns a fresh copy of eval.jsonl, the cooperative's small evaluation set (fields id,
// question, answer and sometimes input). Written by hand for the demo; one of its rows was pasted
// into the pool too (the leak the demo's pick refuses).
func Eval() []byte { return []byte(eval) }

// Target returns a fresh copy of target.jsonl, the rows of the task to
// select for, with ids "target-01"... and the same fields as Pool.
func Target() []byte { return []byte(target) }
