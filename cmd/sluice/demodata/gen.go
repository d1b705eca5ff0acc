//go:build ignore

// Command gen writes pool.jsonl and target.jsonl, the invented demo data that
// sluice demo runs on. Every choice comes from fixed-seed PCG streams, so
// re-running it reproduces the committed files byte for byte:
//
//	cd cmd/sluice/demodata && go run gen.go
//
// After changing anything here, re-run it and update the expected counts in
// demodata_test.go (the generator prints them).
package main

import (
	"bytes"
	"encoding/json"
	"fmt"
	"log"
	"math"
	"math/rand/v2"
	"os"
	"sort"
	"strings"
	"unicode"
	"unicode/utf8"
)

type row struct {
	ID          string `json:"id"`
	Instruction string `json:"instruction"`
	Input       string `json:"input"`
	Output      string `json:"output"`
	Topic       string `json:"topic"`
}

const (
	minWords = 20
	maxWords = 120
)

// Base rows per topic before duplicates and two-topic rows are added. The
// target topic is deliberately a minority so that selection has work to do.
var plan = []struct {
	topic string
	n     int
}{
	{"dispatch", 80},
	{"engine", 80},
	{"weather", 75},
	{"baking", 70},
	{"paperwork", 65},
	{"garden", 70},
	{"stories", 60},
	{"spreadsheet", 70},
	{"firstaid", 65},
	{"knots", 60},
}

const (
	nMixed     = 18
	nExactDup  = 20
	nNearDup   = 20
	nTarget    = 40
	targetName = "dispatch"
)

type gen struct{ r *rand.Rand }

func newGen(a, b uint64) *gen { return &gen{rand.New(rand.NewPCG(a, b))} }

func (g *gen) pick(xs ...string) string  { return xs[g.r.IntN(len(xs))] }
func (g *gen) n(lo, hi int) int          { return lo + g.r.IntN(hi-lo+1) }
func (g *gen) chance(p float64) bool     { return g.r.Float64() < p }
func (g *gen) pickS(xs []string) string  { return xs[g.r.IntN(len(xs))] }
func fill(t string, kv ...string) string { return strings.NewReplacer(kv...).Replace(t) }
func hm(m int) string                    { return fmt.Sprintf("%02d:%02d", m/60, m%60) }
func money(p int) string                 { return fmt.Sprintf("£%d.%02d", p/100, p%100) }
func join(parts ...string) string        { return strings.Join(nonEmpty(parts), " ") }
func words(r row) int                    { return len(strings.Fields(r.Instruction + " " + r.Input + " " + r.Output)) }

// plural writes "1 hour" or "3 hours".
func plural(n int, one, many string) string {
	if n == 1 {
		return "1 " + one
	}
	return fmt.Sprintf("%d %s", n, many)
}

// list joins items as "a", "a and b" or "a, b and c".
func list(xs []string) string {
	if len(xs) < 2 {
		return strings.Join(xs, "")
	}
	return strings.Join(xs[:len(xs)-1], ", ") + " and " + xs[len(xs)-1]
}

func nonEmpty(xs []string) []string {
	var out []string
	for _, x := range xs {
		if x != "" {
			out = append(out, x)
		}
	}
	return out
}

// distinct returns k different elements of xs in random order.
func (g *gen) distinct(xs []string, k int) []string {
	idx := g.r.Perm(len(xs))[:k]
	out := make([]string, k)
	for i, j := range idx {
		out[i] = xs[j]
	}
	return out
}

// ---- the invented world ----

var (
	islands  = []string{"Tarn Isle", "Gullholm", "Brackwater Point", "Little Skerrow", "Fennick Island", "Oyster Quay"}
	vessels  = []string{"Marigold", "Sea Wren", "Old Tom", "Brightwater", "Puffin II", "Lantern"}
	piers    = []string{"North Pier", "the Harbour Steps", "Slipway B", "the Fish Market pontoon"}
	days     = []string{"Monday", "Tuesday", "Wednesday", "Thursday", "Friday", "Saturday", "Sunday"}
	names    = []string{"Aggie", "Tomasz", "Ruth", "Dev", "Moira", "Kofi", "Hal", "Bea", "Ines", "Sully", "Wyn", "Priya", "Ossian", "Lorna"}
	models   = []string{"Halvard 3-cylinder diesel", "Tidesmith 40", "Corran twin", "Marlin 25 hp outboard", "Brenna 2-cylinder diesel"}
	clubs    = []string{"the ferry cooperative", "the Kestrel Haven rowing club", "the allotment society", "the harbour choir", "the lifeboat supporters' group", "the Tuesday knitting circle"}
	months   = []string{"January", "February", "March", "April", "May", "June", "July", "August", "September", "October", "November", "December"}
	children = []string{"Nell", "Arlo", "Maisie", "Finn", "Tova", "Jem", "Rosa", "Ike"}
)

// ---- dispatch desk (the target topic) ----

func (g *gen) timetable() []int {
	k := g.n(4, 7)
	t := 6*60 + 30 + 15*g.n(0, 3)
	var out []int
	for i := 0; i < k; i++ {
		out = append(out, t)
		t += 15 * g.n(5, 10)
	}
	return out
}

func fmtTimes(ts []int) string {
	s := make([]string, len(ts))
	for i, t := range ts {
		s[i] = hm(t)
	}
	return strings.Join(s, ", ")
}

func (g *gen) dispatch() (string, string, string) {
	switch g.r.IntN(10) {
	case 0:
		return g.dNext()
	case 1:
		return g.dDelay()
	case 2:
		return g.dCover()
	case 3:
		return g.dGroup()
	case 4:
		return g.dFares()
	case 5:
		return g.dLost()
	case 6:
		return g.dLog()
	case 7:
		return g.dPriority()
	case 8:
		return g.dHandover()
	default:
		return g.dComplaint()
	}
}

func (g *gen) dNext() (string, string, string) {
	isl, pier, v, day := g.pickS(islands), g.pickS(piers), g.pickS(vessels), g.pickS(days)
	tt := g.timetable()
	k := g.n(1, len(tt)-1)
	q := tt[k-1] + g.n(1, tt[k]-tt[k-1]-1)
	next := tt[k]
	cross := 5 * g.n(4, 11)
	kv := []string{"{i}", isl, "{p}", pier, "{v}", v, "{d}", day, "{q}", hm(q), "{tt}", fmtTimes(tt), "{c}", fmt.Sprint(cross),
		"{n}", hm(next), "{a}", hm(next + cross), "{b}", hm(next - 5)}
	var ins, in string
	switch g.r.IntN(3) {
	case 0:
		ins = fill(g.pick(
			"A passenger at {p} asks when the next boat to {i} leaves. It is {q} on a {d}. Today's departures are {tt} and the crossing takes about {c} minutes. What should the desk say?",
			"It's {q} on {d} and someone at the window wants to reach {i}. Departures from {p}: {tt}. Crossing about {c} minutes. Give them the answer.",
			"Tell a walk-in customer the next sailing to {i} after {q}. The {d} timetable from {p} is {tt}, and the trip is roughly {c} minutes."), kv...)
	case 1:
		ins = g.pick("Answer the caller using today's timetable.", "Reply to this phone enquiry at the dispatch desk.", "Use the timetable to answer the passenger.")
		in = fill("Timetable, {p} to {i} ({d}): {tt}. Crossing time about {c} minutes.\nCaller: Hi, I'm at {p} at {q}. What's the next ferry to {i}, and when would I get there?", kv...)
	default:
		ins = fill(g.pick("Which sailing can this passenger catch?", "Work out the next departure for this text message."), kv...)
		in = fill(g.pick("Text from a passenger at {q}: is there still a boat to {i} from {p} today? (Departures: {tt}; crossing {c} min.)",
			"Msg rcvd {q} {d}: need to get to {i} asap, where from and when? Sailings from {p}: {tt}. Crossing {c} min."), kv...)
	}
	follow := ""
	if k+1 < len(tt) {
		follow = fmt.Sprintf(g.pick("If you miss it, the following boat leaves at %s.", "The one after that is at %s."), hm(tt[k+1]))
	} else {
		follow = g.pick("That is the last sailing of the day, so please don't miss it.", "It is the final departure today.")
	}
	out := join(
		fill(g.pick("The next sailing to {i} leaves {p} at {n} on the {v}.", "Your next boat to {i} is the {n} from {p}.", "The {n} departure from {p} is the next one to {i}."), kv...),
		fill(g.pick("The crossing takes about {c} minutes, so you should arrive around {a}.", "With a crossing of about {c} minutes you will be on {i} at roughly {a}."), kv...),
		fill(g.pick("Boarding closes five minutes before departure, so please be at the ramp by {b}.", "Please have your ticket ready; the crew start boarding about ten minutes before departure.", "Tickets can be bought on board, but buy at the desk if you have a bicycle."), kv...),
		follow)
	return ins, in, out
}

var delayReasons = []struct{ long, short string }{
	{"a force 7 south-westerly gusting to gale force", "SW 7 gusting 8"},
	{"thick fog in the outer channel", "fog, vis under 200 m"},
	{"a heavy swell breaking over the bar at low water", "swell breaking on the bar"},
	{"a gale warning for the coastal waters", "gale warning in force"},
	{"strong wind against a spring ebb tide", "wind over tide, steep chop"},
	{"poor visibility in driving rain", "heavy rain, vis poor"},
	{"an engine alarm that the crew are checking", "engine temp alarm, checking"},
}

func (g *gen) dDelay() (string, string, string) {
	isl, pier, v := g.pickS(islands), g.pickS(piers), g.pickS(vessels)
	rs := delayReasons[g.r.IntN(len(delayReasons))]
	t := 7*60 + 15*g.n(0, 40)
	t2 := t + 15*g.n(2, 8)
	t3 := t + 15*g.n(1, 3)
	kv := []string{"{i}", isl, "{p}", pier, "{v}", v, "{t}", hm(t), "{t2}", hm(t2), "{t3}", hm(t3), "{r}", rs.long, "{rs}", rs.short,
		"{alt}", g.pickS(islands)}
	var ins, in string
	switch g.r.IntN(3) {
	case 0:
		ins = fill(g.pick("Draft a notice for the board at {p}: the {t} sailing to {i} is delayed because of {r}.",
			"Write the noticeboard message for a delayed {t} {i} ferry. Reason: {r}. Expected to sail no earlier than {t2}."), kv...)
	case 1:
		ins = fill(g.pick("Write a short text message to passengers booked on the {t} {i} boat. It is held in harbour because of {r}.",
			"Send booked passengers an update: the {v} will not leave {p} at {t} for {i} due to {r}."), kv...)
	default:
		ins = g.pick("Turn this skipper's radio call into a passenger announcement.", "Rewrite this radio message for passengers waiting on the quay.")
		in = fill("{v} to dispatch: holding at {p}, {rs}. Won't sail the {t} to {i} before {t2} at the earliest. Will call again at {t3}.", kv...)
	}
	out := join(
		fill(g.pick("Passenger notice: the {t} sailing from {p} to {i} is delayed until at least {t2} because of {r}.",
			"Because of {r}, the {t} ferry to {i} is being held at {p} and will not leave before {t2}.",
			"We are sorry, but the {t} {i} boat is waiting in harbour until {t2} or later due to {r}."), kv...),
		fill(g.pick("The skipper will look at conditions again at {t3} and we will post an update here and by text.",
			"Safety comes first, and the crew will only sail when the crossing is safe. Next update at {t3}.",
			"We will confirm a new departure time at {t3}."), kv...),
		g.pick("Your ticket is valid on any later sailing today, or the desk can give you a full refund.",
			"Tickets stay valid for later boats today; refunds are available at the desk.",
			"If you need to travel urgently, please speak to the dispatch desk about other options."),
		g.pick("Thank you for your patience. Kestrel Haven Ferry Co-op dispatch.", "We are sorry for the disruption.", ""))
	return ins, in, out
}

var faults = []string{"a worn raw-water impeller", "a slipping alternator belt", "water in the fuel filter", "an overheating engine",
	"a fouled propeller", "a leaking exhaust elbow", "a flat starter battery", "a seized gear cable"}

func (g *gen) dCover() (string, string, string) {
	vs := g.distinct(vessels, 3)
	isl, pier := g.pickS(islands), g.pickS(piers)
	f := g.pickS(faults)
	c2, c3 := 10*g.n(3, 8), 10*g.n(3, 8)
	b, bk := g.n(18, 75), g.n(0, 6)
	kv := []string{"{v}", vs[0], "{v2}", vs[1], "{v3}", vs[2], "{i}", isl, "{p}", pier, "{f}", f,
		"{c2}", fmt.Sprint(c2), "{c3}", fmt.Sprint(c3), "{b}", fmt.Sprint(b), "{bk}", fmt.Sprint(bk)}
	ins := fill(g.pick("The {v} is out of service with {f}. Which boat should cover the {i} run today, and what should we tell passengers?",
		"Engine trouble on the {v} ({f}). Write the dispatch plan for the rest of the day.",
		"The engine volunteers have taken the {v} off the {i} route because of {f}. Plan the cover."), kv...)
	in := fill("Spare boats: {v2} (holds {c2}), {v3} (holds {c3}). Booked on the next {i} sailing: {b} passengers, "+plural(bk, "bicycle", "bicycles")+".", kv...)
	var plan string
	switch {
	case c2 >= b && (c2 <= c3 || c3 < b):
		plan = fill("Put the {v2} on the {i} run: she holds {c2}, which covers the {b} booked passengers. Keep the {v3} on standby at {p}.", kv...)
	case c3 >= b:
		plan = fill("Put the {v3} on the {i} run: she holds {c3}, enough for the {b} booked passengers, while the {v2} stays on standby.", kv...)
	default:
		plan = fill("Neither spare boat holds all {b} booked passengers, so run the {v2} and the {v3} together on the next {i} sailing and merge them again afterwards.", kv...)
	}
	bikes := ""
	if bk > 0 {
		bikes = fmt.Sprintf("Check there is deck space for %s before boarding.", plural(bk, "bicycle", "bicycles"))
	}
	out := join(plan, bikes,
		fill(g.pick("Log {f} in the maintenance book so the engine volunteers can look at the {v} before tomorrow's first sailing.",
			"Record the fault on the {v} in the engine log and ask the mechanic on call for an estimate."), kv...),
		fill(g.pick("Passenger message: \"Today's {i} sailings run on a different boat while the {v} is repaired. Times are unchanged.\"",
			"Tell passengers that times are unchanged and only the boat is different."), kv...))
	return ins, in, out
}

var groups = []string{"Fennick Primary School", "the Kestrel Haven walking club", "a birdwatching group from the mainland", "the lifeboat open day volunteers", "the Tuesday knitting circle", "a sea-swimming club"}

func (g *gen) dGroup() (string, string, string) {
	isl, v, day, org := g.pickS(islands), g.pickS(vessels), g.pickS(days), g.pickS(groups)
	kids, adults := 0, g.n(2, 12)
	if strings.Contains(org, "School") || g.chance(0.3) {
		kids = g.n(8, 32)
	}
	cap := 10 * g.n(4, 8)
	bk := g.n(5, cap-5)
	t := 8*60 + 15*g.n(0, 36)
	kv := []string{"{i}", isl, "{v}", v, "{d}", day, "{o}", org, "{k}", fmt.Sprint(kids), "{a}", fmt.Sprint(adults),
		"{cap}", fmt.Sprint(cap), "{bk}", fmt.Sprint(bk), "{t}", hm(t), "{t2}", hm(t + 15*g.n(4, 10))}
	ppl := plural(adults, "adult", "adults")
	if kids > 0 {
		ppl = plural(kids, "child", "children") + " and " + ppl
	}
	kv = append(kv, "{ppl}", ppl)
	var ins, in string
	if g.chance(0.5) {
		ins = fill(g.pick("{o} wants the {t} boat to {i} on {d} for {ppl}. The {v} holds {cap} and {bk} seats are already booked. Can we take them?",
			"Group enquiry: {ppl} on the {t} {i} sailing, {d}. Vessel {v}, capacity {cap}, {bk} already booked. Yes or no, and what next?"), kv...)
	} else {
		ins = g.pick("Decide whether this group booking fits and reply to the organiser.", "Check this booking request against the seats left.")
		in = fill("Group booking request\nGroup: {o}\nPeople: {k} children, {a} adults\nSailing: {t} to {i}, {d}\nVessel: {v}, capacity {cap}, booked {bk}", kv...)
	}
	total, free := kids+adults, cap-bk
	var out string
	if total <= free {
		out = fmt.Sprintf("Yes. The %s holds %d and has %d booked, leaving %d free seats, so the group of %d fits with %d to spare. ", v, cap, bk, free, total, free-total) +
			g.pick("Book them as one party and ask the leader to arrive fifteen minutes early so they board first.",
				"Put them on the manifest as a single booking and send the organiser a confirmation.")
	} else {
		out = fmt.Sprintf("Not on that sailing. The %s has only %d free seats and the group is %d, so they are %d short. ", v, free, total, total-free) +
			fill(g.pick("Offer the {t2} sailing instead, or split the group across two boats.", "Suggest the {t2} boat, which is usually quieter, and hold the seats for 24 hours."), kv...)
	}
	if kids > 0 {
		out += " " + g.pick("Remind them we need at least one adult for every eight children on deck.", "Children must wear the boat's life jackets for the crossing.")
	}
	return ins, in, out
}

func (g *gen) dFares() (string, string, string) {
	isl := g.pickS(islands)
	A := 50 * g.n(12, 24)
	C := A / 2
	B := 50 * g.n(2, 5)
	a, c, b, u := g.n(1, 4), g.n(0, 4), g.n(0, 3), g.n(0, 2)
	kv := []string{"{i}", isl, "{a}", fmt.Sprint(a), "{c}", fmt.Sprint(c), "{b}", fmt.Sprint(b), "{u}", fmt.Sprint(u),
		"{A}", money(A), "{C}", money(C), "{B}", money(B),
		"{party}", fmt.Sprintf("%s, %s over five, %d under five, %s", plural(a, "adult", "adults"), plural(c, "child", "children"), u, plural(b, "bike", "bikes"))}
	ins := fill(g.pick("How much should the desk charge for "+plural(a, "adult", "adults")+", "+plural(c, "child", "children")+" and "+plural(b, "bicycle", "bicycles")+" on a return to {i}?",
		"Work out the fare for a group going to {i} and back: {party}.",
		"A customer asks for return tickets to {i}. Price it up."), kv...)
	in := fill("Fares to {i} (return): adult {A}, child 5-15 {C}, bicycle {B}, under fives and dogs free.", kv...)
	if strings.HasPrefix(ins, "A customer") {
		in += fmt.Sprintf(" Party: %s, %s, %s, %s.", plural(a, "adult", "adults"), plural(c, "child", "children"), plural(u, "toddler", "toddlers"), plural(b, "bicycle", "bicycles"))
	}
	total := a*A + c*C + b*B
	var lines []string
	for _, l := range []struct {
		n         int
		what      string
		unit, sum int
	}{{a, "Adults", A, a * A}, {c, "Children", C, c * C}, {b, "Bicycles", B, b * B}} {
		if l.n > 0 {
			lines = append(lines, fmt.Sprintf("%s: %d × %s = %s.", l.what, l.n, money(l.unit), money(l.sum)))
		}
	}
	out := strings.Join(lines, " ") + fmt.Sprintf(" Total %s for the return trip.", money(total))
	out += " " + g.pick("Children under five and dogs on leads travel free.", "Remind them that tickets are valid for return on any day this week.", "Card and cash are both fine at the desk.")
	return ins, in, out
}

var lostItems = []string{"a blue rucksack", "a child's red wellington boot", "a pair of reading glasses in a brown case", "a folding umbrella",
	"a phone with a cracked green cover", "a woollen hat with a bobble", "a set of car keys on a lighthouse keyring", "a camera in a canvas bag"}

func (g *gen) dLost() (string, string, string) {
	item, v, isl, day, name := g.pickS(lostItems), g.pickS(vessels), g.pickS(islands), g.pickS(days), g.pickS(names)
	t := 7*60 + 15*g.n(0, 44)
	kv := []string{"{it}", item, "{v}", v, "{i}", isl, "{d}", day, "{n}", name, "{t}", hm(t), "{p}", g.pickS(piers), "{ref}", fmt.Sprint(g.n(100, 999))}
	ins := g.pick("Write a reply to this lost property enquiry.", "Answer the passenger about their lost item.", "Reply to this message left for the ferry desk.")
	in := fill(g.pick("Hello, I think I left {it} on the {t} boat from {i} on {d}. Has anyone handed it in? {n}",
		"Lost {it} on the {v} on {d}, the {t} sailing I think. Can you check? Thanks, {n}"), kv...)
	var out string
	if g.chance(0.5) {
		out = fill(g.pick("Hello {n}, thank you for getting in touch. {It} matching your description was handed in by the crew of the {v} on {d} and is being kept at the kiosk on {p}.",
			"Hi {n}, good news: the crew found {it} on the {v} after the {t} sailing, and it is at the kiosk on {p} now."), kv...) + " " +
			g.pick("You can collect it between 09:00 and 17:00; please bring something with your name on it.", "We hold lost property for four weeks, so there is no rush.")
	} else {
		out = fill("Hello {n}, I'm sorry, nothing like that has been handed in yet. I have logged it as lost property reference LP-{ref} and asked the crew of the {v} to check the lockers and under the seats. ", kv...) +
			g.pick("We will phone you if it turns up.", "Please check back with the desk on Friday.")
	}
	out = strings.Replace(out, "{It}", upperFirst(item), 1)
	return ins, in, out
}

func upperFirst(s string) string {
	r, n := utf8.DecodeRuneInString(s)
	return string(unicode.ToUpper(r)) + s[n:]
}

func (g *gen) dLog() (string, string, string) {
	vs := g.distinct(vessels, 2)
	t := 6*60 + 45 + 5*g.n(0, 6)
	var lines []string
	pax, sail := 0, 0
	note := ""
	for i := 0; i < g.n(3, 5); i++ {
		v, isl := g.pickS(vs), g.pickS(islands)
		p := g.n(6, 58)
		lines = append(lines, fmt.Sprintf("%s %s: departed %s for %s, %d pax.", hm(t), v, g.pickS(piers), isl, p))
		pax += p
		sail++
		t += g.n(20, 55)
	}
	switch g.r.IntN(3) {
	case 0:
		lines = append(lines, fmt.Sprintf("%s %s: fuel low, will refuel at %s before next run.", hm(t), vs[0], g.pickS(piers)))
		note = fmt.Sprintf("The %s needs fuel before her next run.", vs[0])
	case 1:
		lines = append(lines, fmt.Sprintf("%s %s: reports swell building on the bar, may need to skip %s.", hm(t), vs[1], g.pickS(islands)))
		note = fmt.Sprintf("The %s reports swell building on the bar, so a later stop may be skipped; check the tide before the afternoon.", vs[1])
	default:
		lines = append(lines, fmt.Sprintf("%s %s: minor engine alarm cleared, running normally.", hm(t), vs[0]))
		note = fmt.Sprintf("The %s had an engine alarm that cleared; mention it to the engine volunteers.", vs[0])
	}
	ins := g.pick("Summarise this morning's radio log for the dispatch supervisor.", "Write a three-sentence summary of this dispatch log.", "Give the shift lead a short summary of the radio log below.")
	out := fmt.Sprintf("%d sailings went out this morning, carrying %d passengers in total. ", sail, pax) + note + " " +
		g.pick("No other incidents were logged.", "Everything else ran to time.", "All boats are otherwise accounted for.")
	return ins, strings.Join(lines, "\n"), out
}

var calls = []struct{ class, msg, action string }{
	{"urgent", "A passenger has collapsed on the {v} halfway to {i}.", "call the emergency services and tell the skipper to return or meet the ambulance at the nearest pier"},
	{"urgent", "Skipper of the {v} reports water coming in faster than the bilge pump can clear.", "alert the coastguard on the radio and send the nearest boat to stand by"},
	{"urgent", "A child is missing from the group that just came off the {i} boat.", "stop boarding at {p}, get a description and tell every crew and the harbour office"},
	{"urgent", "Smoke is coming from the engine hatch on the {v} at {p}.", "get everyone off the boat, call the fire service and keep the quay clear"},
	{"same-day", "The handrail on the ramp at {p} is loose.", "close that side of the ramp, tape it off and ask a maintenance volunteer to fix it today"},
	{"same-day", "The {v} left two passengers behind at {i}.", "check the next sailing has room and phone them with the time"},
	{"same-day", "The card reader on the {v} has stopped working.", "tell the crew to take cash and give written receipts until the spare reader arrives"},
	{"same-day", "The skipper of the {v} says the forecast swell may close the {i} landing this afternoon.", "warn booked passengers now and pencil in a later sailing"},
	{"routine", "A caller wants a copy of next month's winter timetable.", "post or email the timetable and note the request"},
	{"routine", "Someone asks whether dogs need a ticket to {i}.", "tell them dogs on leads travel free"},
	{"routine", "A volunteer wants to swap their Saturday shift on the {v}.", "add it to the rota book for the coordinator"},
	{"routine", "A visitor asks if the {i} boat can take a pushchair.", "say yes, pushchairs go on the open deck and crew will help"},
}

func (g *gen) dPriority() (string, string, string) {
	c := calls[g.r.IntN(len(calls))]
	kv := []string{"{v}", g.pickS(vessels), "{i}", g.pickS(islands), "{p}", g.pickS(piers)}
	ins := g.pick("Classify this call to the dispatch desk as urgent, same-day or routine, and give the first action.",
		"Triage this message for the duty dispatcher: urgent, same-day or routine? What happens first?",
		"How should the desk prioritise this report, and what is the first step?")
	in := fill(g.pick("", "Call logged at "+hm(7*60+5*g.n(0, 150))+": ")+c.msg, kv...)
	why := map[string]string{
		"urgent":   g.pick("Someone's safety is at risk right now.", "Life or the boat may be in danger."),
		"same-day": g.pick("Nobody is in danger, but it affects today's sailings.", "It needs sorting before the end of the day."),
		"routine":  g.pick("It is a general enquiry with no time pressure.", "It can wait for the normal queue."),
	}[c.class]
	out := fill(upperFirst(c.class)+". "+why+" First action: "+c.action+". "+
		g.pick("Write it in the desk log with the time.", "Note the time and who took the call.", "Then log it."), kv...)
	return ins, in, out
}

func (g *gen) dHandover() (string, string, string) {
	vs := g.distinct(vessels, 3)
	isl := g.distinct(islands, 2)
	ns := g.distinct(names, 2)
	f := g.pickS(faults)
	dir := g.pick("south-west", "westerly", "north-west", "southerly")
	force := g.n(4, 6)
	party := g.n(15, 30)
	t := 13*60 + 15*g.n(0, 12)
	ref := g.n(100, 999)
	facts := []string{
		fmt.Sprintf("- %s on standby, %s covering %s", vs[0], vs[1], isl[0]),
		fmt.Sprintf("- %s: %s, engine volunteers booked %s", vs[2], f, hm(t+60)),
		fmt.Sprintf("- school party of %d on the %s to %s", party, hm(t), isl[1]),
		fmt.Sprintf("- forecast: wind %s %d, easing this evening", dir, force),
		fmt.Sprintf("- %s phoned about lost property, ref LP-%d, call back", ns[1], ref),
	}
	g.r.Shuffle(len(facts), func(i, j int) { facts[i], facts[j] = facts[j], facts[i] })
	ins := g.pick("Write a shift handover note for the afternoon dispatcher from these notes.",
		"Turn these scribbles into a clear handover for the next person on the desk.",
		"Make a tidy handover note out of the morning dispatcher's list.")
	out := fmt.Sprintf("Handover from %s. The %s is on standby and the %s is covering the %s run. "+
		"The %s is off service with %s, and the engine volunteers come at %s. "+
		"A school party of %d is booked on the %s to %s. The wind is %s force %d, easing this evening. "+
		"Please call %s back about lost property LP-%d.",
		ns[0], vs[0], vs[1], isl[0], vs[2], f, hm(t+60), party, hm(t), isl[1], dir, force, ns[1], ref)
	return ins, strings.Join(facts, "\n"), out
}

func (g *gen) dComplaint() (string, string, string) {
	isl, v, day, name := g.pickS(islands), g.pickS(vessels), g.pickS(days), g.pickS(names)
	t := 7*60 + 15*g.n(0, 44)
	why := g.pick("the skipper held the boat for a squall passing through", "the engine alarm needed checking before we could sail", "fog closed the channel for forty minutes", "the tide was too low to use the {i} landing")
	kv := []string{"{i}", isl, "{v}", v, "{d}", day, "{n}", name, "{t}", hm(t), "{w}", g.pick("40", "55", "70", "90")}
	ins := g.pick("Reply politely to this complaint.", "Draft the desk's answer to this email.", "Write a short, friendly reply to the passenger.")
	in := fill(g.pick("The {t} to {i} on {d} was {w} minutes late and nobody told us why. I missed my appointment. {n}",
		"Your {v} left {w} minutes late on {d} and the quay had no information at all. Not good enough. {n}"), kv...)
	out := fill("Dear {n}, thank you for telling us, and I am sorry your journey on {d} was late. On that morning "+why+". ", kv...) +
		g.pick("You are right that we should have told waiting passengers sooner, and we have asked the crew to use the quay speaker in future. ",
			"We know the quay board was not updated, and we are fixing how delays are posted. ") +
		g.pick("A free return ticket is waiting for you at the desk.", "As a volunteer cooperative we rely on feedback like yours, so thank you.")
	return ins, in, fill(out, kv...)
}

// ---- boat engine maintenance ----

// engine wraps the engine rows: some are framed around the day's sailings,
// because that is how the crews actually ask, and it blurs the edge between
// this topic and the dispatch desk.
func (g *gen) engine() (string, string, string) {
	ins, in, out := g.engineRow()
	if g.chance(0.3) {
		ins = fill(g.pick("Before the {t} sailing to {i}: ", "The {v} is due on the {i} run at {t}. ", "Skipper asking from {p}: "),
			"{t}", hm(7*60+15*g.n(0, 40)), "{i}", g.pickS(islands), "{v}", g.pickS(vessels), "{p}", g.pickS(piers)) + ins
	}
	return ins, in, out
}

func (g *gen) engineRow() (string, string, string) {
	m, v := g.pickS(models), g.pickS(vessels)
	kv := []string{"{m}", m, "{v}", v, "{n}", g.pickS(names)}
	switch g.r.IntN(10) {
	case 0:
		ins := fill(g.pick("How do I change the raw-water impeller on the {m} in the {v}?", "Explain how to replace a raw-water pump impeller.",
			"{n} has a new impeller for the {v}'s {m}. Give the steps."), kv...)
		out := join(g.pick("Close the seacock first.", "Start by shutting the raw-water seacock so the boat does not flood."),
			fmt.Sprintf(g.pick("Take off the pump cover plate (%d screws on most pumps) and pull the old impeller out with pliers.", "Remove the %d cover screws and ease the impeller out with two screwdrivers or a puller."), g.n(4, 6)),
			g.pick("Count the vanes: any missing pieces must be found, usually in the heat exchanger inlet.", "Check every vane for cracks, and hunt down any broken piece before it blocks the cooler."),
			g.pick("Smear the new impeller with a little washing-up liquid, push it in with the vanes bent the way the shaft turns, and fit a new gasket.", "Lubricate the new impeller, bend the vanes in the direction of rotation, and use a fresh gasket."),
			g.pick("Open the seacock, start the engine and check water is coming out of the exhaust within a few seconds.", "Finally reopen the seacock, run the engine and watch for a steady flow at the exhaust."))
		return ins, "", out
	case 1:
		h, iv := g.n(20, 260), 50*g.n(2, 5)
		wk := g.n(12, 30)
		ins := fill(g.pick(fmt.Sprintf("The {m} on the {v} has run %d hours since its last oil change and the manual says every %d hours. When is the next change due?", h, iv),
			fmt.Sprintf("Oil change check: %d engine hours since the last change, interval %d hours. The {v} does about %d hours a week in summer.", h, iv, wk)), kv...)
		var out string
		if h >= iv {
			out = fmt.Sprintf("It is overdue by %d hours, so change the oil and filter before the %s goes out again. ", h-iv, v)
		} else {
			left := iv - h
			out = fmt.Sprintf("There are %s left before the change is due. At about %d hours a week that is roughly %s of summer running. ", plural(left, "hour", "hours"), wk, plural((left+wk-1)/wk, "week", "weeks"))
		}
		out += g.pick("Warm the engine first so the oil drains fully, and write the hours in the engine log.", "Always change the filter at the same time and check the level again after a short run.", "Dispose of the old oil at the harbour's waste oil tank, not down the drain.")
		return ins, "", out
	case 2:
		ins := g.pick("The temperature alarm went off. What should we check, in order?", "Give a checklist for an overheating inboard diesel.", "Help the engine volunteer find the cause from this skipper's note.")
		in := fill(fmt.Sprintf("Skipper's note: temp alarm on the {v} after %d minutes at cruising revs, %s from the exhaust.", g.n(5, 40), g.pick("very little water", "steam and a trickle of water", "normal water flow")), kv...)
		out := join(g.pick("Stop the engine and let it cool before opening anything.", "Let the engine cool down first; never open a hot header tank."),
			g.pick("Check the raw-water seacock is open and the strainer is clear of weed and plastic.", "Look at the raw-water strainer: weed, jellyfish and plastic bags are the usual culprits."),
			g.pick("Then inspect the impeller for missing vanes.", "If the strainer is clean, the impeller is the next suspect."),
			g.pick("Check the coolant level in the header tank and the tension of the pump belt.", "Top up coolant if low and look for a slack or glazed belt."),
			g.pick("If all of those are fine, the heat exchanger may be scaled and needs cleaning.", "A blocked heat exchanger or a faulty thermostat are the last things to check."))
		return ins, in, out
	case 3:
		ins := fill(g.pick("How do I bleed the fuel system on the {m} after changing the filter?", "The {v}'s engine stopped after a fuel filter change. How do we get the air out?"), kv...)
		out := join(g.pick("Air in the fuel lines is the most common reason a diesel stops after a filter change.", "A diesel will not run with air in the fuel."),
			g.pick("Fill the new filter with clean diesel before fitting it.", "Pre-fill the filter bowl so there is less air to remove."),
			g.pick("Open the bleed screw on the filter head and work the lift pump lever until fuel comes out with no bubbles, then close it.", "Slacken the bleed screw, pump the priming lever until bubble-free fuel appears, and tighten the screw."),
			g.pick("Repeat at the injection pump bleed screw if there is one.", "Then do the same at the injection pump."),
			g.pick("Keep a rag underneath and mop up spilt fuel before starting.", "Wipe up any diesel and check for leaks with the engine running."))
		return ins, "", out
	case 4:
		col := g.r.IntN(3)
		colour := []string{"black", "blue", "white"}[col]
		ins := fill(g.pick(fmt.Sprintf("The {m} is giving off %s smoke. What might cause it?", colour), fmt.Sprintf("%s smoke from the {v}'s exhaust this morning. Is it serious?", upperFirst(colour))), kv...)
		out := []string{
			join("Black smoke means fuel is not burning completely.", g.pick("Look for a blocked air filter, a fouled propeller or an overloaded boat.", "Common causes are a dirty air filter, weed round the propeller or worn injectors."), "Reduce revs until it is fixed."),
			join("Blue smoke means the engine is burning oil.", g.pick("Check the oil level; overfilling can do it, and so can worn piston rings or valve guides.", "It can come from worn rings or valve stem seals, or simply too much oil in the sump."), "Watch the oil consumption and log it."),
			join("White smoke is often just steam, especially on a cold morning.", g.pick("If it stays after the engine is warm, water may be getting into the cylinders, so check the head gasket and exhaust elbow.", "If it does not clear once warm, suspect water in the fuel or a leaking exhaust elbow."), "Stop and investigate if the engine misfires."),
		}[col]
		return ins, "", out
	case 5:
		ins := fill(g.pick("When should the anodes on the {v} be replaced?", "What are sacrificial anodes for, and how often do we check them?", "Is this anode worth keeping?"), kv...)
		in := ""
		if strings.HasPrefix(ins, "Is this") {
			in = fmt.Sprintf("Shaft anode on the %s, about %d%% of the metal left, a year since fitting.", v, 10*g.n(2, 9))
		}
		out := join("Anodes are made of a metal that corrodes more easily than the propeller and shaft, so they wear away instead.",
			g.pick("Replace them when about half of the metal has gone.", "Change any anode that has lost half its size."),
			g.pick("Check them at every haul-out and when the boat is dived on.", "Look at them at least once a season, more often on a boat that stays in the water all year."),
			g.pick("Never paint over an anode.", "Clean the contact surface so the new anode makes good electrical contact."))
		return ins, in, out
	case 6:
		ins := fill(g.pick("List the winterising jobs for the {m} before the {v} comes out of the water.", "What do we need to do to lay up an inboard diesel for winter?"), kv...)
		out := join(g.pick("Change the engine oil and filter while the engine is warm, so old acidic oil does not sit in it all winter.", "Start with an oil and filter change."),
			g.pick("Flush the raw-water side with fresh water and then antifreeze.", "Run fresh water through the cooling circuit, then a bucket of antifreeze mixture."),
			g.pick("Take out the impeller and store it dry.", "Remove the impeller so it does not take a set over the winter."),
			g.pick("Fill the fuel tank to reduce condensation and add a biocide.", "Keep the fuel tank full to stop water building up."),
			g.pick("Disconnect and charge the batteries.", "Take the batteries home or keep them on a trickle charger."))
		return ins, "", out
	case 7:
		volts := float64(g.n(112, 128)) / 10
		ins := fill(g.pick("The {m} will not turn over. Where do we start?", "Starting trouble on the {v}: the starter just clicks. What should we check?"), kv...)
		in := fmt.Sprintf("Battery reads %.1f V at rest. %s", volts, g.pick("Engine stop control pushed in.", "Gear lever in neutral.", "Isolator switch on."))
		var b string
		if volts < 12.2 {
			b = fmt.Sprintf("%.1f V at rest is a low battery, so charge it or switch to the second battery before anything else.", volts)
		} else {
			b = fmt.Sprintf("%.1f V is a healthy battery, so the problem is further along.", volts)
		}
		out := join(b, g.pick("Check the isolator switch and the battery terminals for corrosion.", "Clean and tighten the battery terminals and the earth strap."),
			g.pick("Make sure the gear lever is in neutral, because many engines will not start in gear.", "The neutral safety switch stops the starter working in gear."),
			g.pick("If the starter still only clicks, the solenoid or the starter motor itself may be faulty.", "A single click with a good battery usually points to the starter solenoid."))
		return ins, in, out
	case 8:
		ins := fill(g.pick("How tight should the alternator belt be on the {m}?", "The belt on the {v}'s engine squeals when we start. What should we do?"), kv...)
		out := join(g.pick("A squealing belt is usually too slack or glazed.", "Belts stretch in their first hours of use."),
			fmt.Sprintf("As a rule of thumb, press the belt midway along its longest run; it should move about %d mm.", g.n(8, 12)),
			g.pick("Loosen the alternator pivot bolts, lever the alternator out gently, and tighten them again.", "Adjust it by moving the alternator on its slotted bracket."),
			g.pick("Replace it if it is cracked or shiny on the sides, and carry a spare on board.", "Keep a spare belt in the engine box."))
		return ins, "", out
	default:
		hrs := g.n(1200, 4800)
		work := g.pick("changed fuel filter", "new impeller fitted", "oil + filter done", "belt tightened")
		found := g.pick("small weep at exhaust elbow", "strainer full of weed", "all ok", "coolant topped up 0.5 l")
		next := g.pick("50 hrs", "end of month", "before haul-out")
		long := map[string]string{
			"changed fuel filter": "fuel filter changed and system bled", "new impeller fitted": "raw-water impeller replaced",
			"oil + filter done": "engine oil and oil filter changed", "belt tightened": "alternator belt re-tensioned",
			"small weep at exhaust elbow": "a small weep at the exhaust elbow, to be watched", "strainer full of weed": "raw-water strainer full of weed, cleaned",
			"all ok": "nothing else found", "coolant topped up 0.5 l": "coolant low, topped up with 0.5 litres",
			"50 hrs": "in 50 engine hours", "end of month": "at the end of the month", "before haul-out": "before the boat is hauled out",
		}
		ins := g.pick("Write a maintenance log entry from these notes.", "Turn the engine volunteer's notes into a proper log entry.")
		in := fmt.Sprintf("%s %s, %s. hrs %d. %s. %s. next check %s.", v, m, g.pickS(days), hrs, work, found, next)
		out := fmt.Sprintf("Vessel: %s. Engine: %s. Engine hours: %d. Work done: %s. Findings: %s. Next check %s. ", v, m, hrs, long[work], long[found], long[next]) +
			g.pick("Signed off by the duty engine volunteer.", "No further action needed before the next sailing.", "Skipper informed.")
		return ins, in, out
	}
}

// ---- tide and weather reading ----

var twelfths = []int{0, 1, 3, 6, 9, 11, 12}

var beaufort = []struct {
	name, knots, sea string
}{
	{"gentle breeze", "7 to 10", "large wavelets with scattered white horses"},
	{"moderate breeze", "11 to 16", "small waves with fairly frequent white horses"},
	{"fresh breeze", "17 to 21", "moderate waves and many white horses, some spray"},
	{"strong breeze", "22 to 27", "large waves forming, white foam crests everywhere"},
	{"near gale", "28 to 33", "the sea heaps up and foam blows in streaks"},
	{"gale", "34 to 40", "moderately high waves with crests breaking into spindrift"},
}

// weather wraps the tide and weather rows; some end with a word about the
// crossings, for the same reason as in engine.
func (g *gen) weather() (string, string, string) {
	ins, in, out := g.weatherRow()
	if g.chance(0.3) {
		out += " " + fill(g.pick("Check with the dispatch desk before the crossing to {i}.", "Passengers for {i} should ask at {p} whether the boats are running.",
			"The skipper of the {v} makes the final call on each sailing."), "{i}", g.pickS(islands), "{p}", g.pickS(piers), "{v}", g.pickS(vessels))
	}
	return ins, in, out
}

func (g *gen) weatherRow() (string, string, string) {
	switch g.r.IntN(9) {
	case 0, 1:
		lw := 4*60 + 10*g.n(0, 60)
		h0 := float64(g.n(3, 12)) / 10
		h1 := h0 + float64(g.n(25, 45))/10
		k := g.n(1, 5)
		// Round as the answer will be read, so later sums agree with it.
		hgt := math.Round((h0+(h1-h0)*float64(twelfths[k])/12)*10) / 10
		ins := g.pick("Use the rule of twelfths to estimate the height of tide.", "Roughly how much water will there be at the given time?", "Work out the tide height from this tide table entry.")
		in := fmt.Sprintf("Low water %s, %.1f m. High water %s, %.1f m. Time asked: %s.", hm(lw), h0, hm(lw+360), h1, hm(lw+60*k))
		out := fmt.Sprintf("The range is %.1f m. %s after low water the tide has risen about %d/12 of the range, which is %.2f m, so the height is roughly %.1f m above chart datum. ",
			h1-h0, upperFirst(plural(k, "hour", "hours")), twelfths[k], (h1-h0)*float64(twelfths[k])/12, hgt)
		if g.chance(0.5) {
			d := float64(g.n(-5, 8)) / 10
			dr := float64(g.n(8, 15)) / 10
			water := math.Round((d+hgt)*10) / 10
			if d < 0 {
				out += fmt.Sprintf("The bar dries %.1f m, so there is about %.1f m of water over it", -d, water)
			} else {
				out += fmt.Sprintf("The bar has %.1f m charted, so there is about %.1f m of water over it", d, water)
			}
			if water-dr > 0.5 {
				out += fmt.Sprintf(", comfortably more than a %.1f m draft.", dr)
			} else {
				out += fmt.Sprintf(", too little margin for a %.1f m draft.", dr)
			}
		} else {
			out += g.pick("The rule assumes a regular six-hour tide, so treat the answer as an estimate.", "Strong winds and high pressure can change the real height by a few tenths.")
		}
		return ins, in, out
	case 2:
		f := g.n(3, 8)
		b := beaufort[f-3]
		ins := g.pick(fmt.Sprintf("What does force %d on the Beaufort scale mean for a small open boat?", f), fmt.Sprintf("The forecast says force %d. Describe what the sea will look like.", f),
			fmt.Sprintf("Explain force %d in plain words for a new volunteer.", f))
		out := fmt.Sprintf("Force %d is a %s, about %s knots of wind. At sea you would see %s. ", f, b.name, b.knots, b.sea)
		switch {
		case f <= 4:
			out += g.pick("Most small boats are comfortable, though spray comes over the bow.", "Pleasant conditions for sailing dinghies and small motor boats.")
		case f <= 6:
			out += g.pick("Small open boats should reef or stay close to shelter.", "It is hard work in a small boat, and wind against tide makes it rougher.")
		default:
			out += g.pick("Small boats should stay in harbour.", "Only larger, well-crewed vessels should be out.")
		}
		return ins, "", out
	case 3:
		fall := g.n(1, 9)
		ins := g.pick(fmt.Sprintf("The barometer fell %d hPa in the last three hours. What does that suggest?", fall), fmt.Sprintf("Pressure is down %d millibars since this morning's reading three hours ago. Should we worry?", fall))
		var out string
		switch {
		case fall >= 6:
			out = "A fall that fast usually means strong wind, possibly a gale, within the next few hours. Secure loose gear and check the latest shipping forecast."
		case fall >= 3:
			out = "A steady fall like that points to a low pressure system approaching, with wind rising and rain likely later in the day."
		default:
			out = "A small change like that is normal and by itself says little; watch the trend over the next readings."
		}
		out += " " + g.pick("Note each reading in the log with the time, because the trend matters more than a single value.", "The wind will often back, turning anticlockwise, ahead of the front.")
		return ins, "", out
	case 4:
		dirs := []string{"south-west", "west", "north-west", "south", "south-east", "north"}
		d := g.pickS(dirs)
		f := g.n(3, 7)
		later := f + g.n(0, 2)
		vis := g.pick("good", "moderate", "good, occasionally poor", "poor in fog patches")
		wx := g.pick("rain then showers", "fair", "showers", "fog banks at first, then fair")
		sea := g.pick("slight", "moderate", "moderate or rough", "rough")
		ins := g.pick("Explain this inshore forecast in plain English for the noticeboard.", "Put this forecast into simple words.", "What does this forecast mean for a day on the water?")
		in := fmt.Sprintf("Wind %s %d, %s later. Sea state %s. Weather %s. Visibility %s.", d, f, map[bool]string{true: "becoming " + fmt.Sprint(later), false: "occasionally " + fmt.Sprint(f+1)}[later > f], sea, wx, vis)
		out := fmt.Sprintf("The wind will blow from the %s at force %d, ", d, f)
		if later > f {
			out += fmt.Sprintf("rising to force %d later. ", later)
		} else {
			out += fmt.Sprintf("with some stronger gusts. ")
		}
		out += fmt.Sprintf("The sea will be %s, with %s, and you should be able to see %s. ", sea, wx, map[string]string{"good": "a long way", "moderate": "a few miles", "good, occasionally poor": "well most of the time, but not always", "poor in fog patches": "very little inside fog patches"}[vis])
		if later >= 6 || sea == "rough" {
			out += "Not a day for small open boats."
		} else {
			out += g.pick("Fine for a trip out with sensible care.", "Reasonable conditions, but keep an eye on the sky.")
		}
		return ins, in, out
	case 5:
		ins := g.pick("What is the difference between spring tides and neap tides?", "Why are some tides bigger than others?", "Explain springs and neaps to a new crew member.")
		out := join(g.pick("Spring tides have the biggest range: the highest highs and the lowest lows.", "At springs the tide rises highest and falls lowest."),
			g.pick("They happen around new and full moon, when the sun and moon pull in line.", "They come a day or two after new and full moon."),
			g.pick("Neap tides, around the quarter moons, have the smallest range.", "Neaps fall between them, with a small range and gentler streams."),
			g.pick("Tidal streams run fastest at springs, which matters when crossing a bar or entering a narrow harbour.", "Expect stronger currents and shallower low water at springs."))
		return ins, "", out
	case 6:
		ins := g.pick("How can you tell whether fog will clear during the morning?", "What kinds of fog do we get along the coast, and which ones clear?", "Is this fog likely to lift?")
		in := ""
		if strings.HasPrefix(ins, "Is this") {
			in = g.pick("Warm southerly air over cold water, fog sitting on the sea since yesterday.", "Clear calm night, fog in the valleys and over the harbour at dawn.")
		}
		out := join(g.pick("Radiation fog forms over land on clear, calm nights and usually burns off as the sun warms the ground.", "Fog that forms over land on a still night tends to lift by mid-morning."),
			g.pick("Sea fog forms when warm, moist air moves over cold water, and it can last for days until the wind changes.", "Sea fog is stubborn: sunshine does not clear it, only a change of air mass does."),
			g.pick("If the fog has come in off the sea on a southerly breeze, plan for it to stay.", "Watch the wind direction; a shift to offshore often clears sea fog."))
		return ins, in, out
	case 7:
		hw := 6*60 + 10*g.n(0, 60)
		dir := g.pick("westerly", "south-westerly", "north-westerly")
		ins := g.pick("Why is the water rough in the harbour mouth when the wind is against the tide?", fmt.Sprintf("High water is at %s and there is a strong %s wind. When will the harbour entrance be worst?", hm(hw), dir))
		out := join("When the wind blows against the tidal stream the waves get shorter and steeper, and they can break.",
			fmt.Sprintf("If the ebb runs out of the harbour after high water at %s, a %s wind blowing in will meet it, so expect the roughest water in the hours after %s, especially at springs.", hm(hw), dir, hm(hw+60)),
			g.pick("Cross near slack water if you can.", "The stream is weakest around the turn of the tide."))
		return ins, "", out
	default:
		ins := g.pick("What can clouds tell us about the weather coming?", "Which cloud signs warn of a change in the weather?", "How do you read the sky before going out in a boat?")
		out := join(g.pick("High, thin streaks of cirrus that thicken into a milky sheet often mean a front is 12 to 24 hours away.", "Mares' tails followed by a thickening grey sheet usually mean rain and wind within a day."),
			g.pick("Towering cumulus with dark bases can bring sudden squalls and gusts.", "Tall, dark-based cumulus warn of showers and strong gusts."),
			g.pick("A halo round the sun or moon comes from thin high cloud and often goes before rain.", "A lowering cloud base and a falling barometer together are a strong sign."),
			"Always check the official forecast as well.")
		return ins, "", out
	}
}

// ---- bakery recipes ----

type ing struct {
	qty  float64
	unit string
	what string
}

var recipes = []struct {
	name   string
	ings   []ing
	method string
	ovenC  int
	mins   string
	makes  int
}{
	{"cheese scones", []ing{{225, "g", "self-raising flour"}, {55, "g", "cold butter"}, {100, "g", "grated strong cheese"}, {150, "ml", "milk"}, {1, "tsp", "mustard powder"}},
		"Rub the butter into the flour, stir in most of the cheese and the mustard, then add milk to make a soft dough. Pat it 2 cm thick, cut rounds and top with the rest of the cheese.", 220, "12 to 15", 8},
	{"soda bread", []ing{{500, "g", "plain wholemeal flour"}, {1, "tsp", "bicarbonate of soda"}, {1, "tsp", "salt"}, {400, "ml", "buttermilk"}},
		"Mix the dry ingredients, pour in the buttermilk and bring it together quickly without kneading. Shape a round, cut a deep cross on top and bake straight away.", 200, "35 to 40", 1},
	{"oat biscuits", []ing{{100, "g", "porridge oats"}, {100, "g", "plain flour"}, {100, "g", "butter"}, {75, "g", "brown sugar"}, {1, "tbsp", "golden syrup"}},
		"Melt the butter, sugar and syrup together, stir into the oats and flour, roll into walnut-sized balls and flatten them on a lined tray.", 180, "12 to 14", 16},
	{"cinnamon buns", []ing{{500, "g", "strong white flour"}, {7, "g", "dried yeast"}, {250, "ml", "warm milk"}, {60, "g", "butter"}, {1, "", "egg"}, {2, "tsp", "ground cinnamon"}},
		"Make an enriched dough, knead for ten minutes and let it double. Roll it out, spread with butter, sugar and cinnamon, roll up, slice and prove again before baking.", 190, "20 to 25", 12},
	{"seeded loaf", []ing{{450, "g", "strong wholemeal flour"}, {50, "g", "mixed seeds"}, {7, "g", "dried yeast"}, {300, "ml", "warm water"}, {1, "tbsp", "honey"}},
		"Knead the dough for ten minutes, leave it to rise for an hour, shape it into a greased tin and prove until it rises just above the rim.", 220, "30 to 35", 1},
	{"lemon drizzle cake", []ing{{225, "g", "softened butter"}, {225, "g", "caster sugar"}, {4, "", "egg"}, {225, "g", "self-raising flour"}, {2, "", "lemon"}},
		"Cream the butter and sugar, beat in the eggs, fold in the flour and the lemon zest. While the cake is still warm, prick it and pour over lemon juice mixed with sugar.", 180, "45 to 50", 10},
	{"vegetable pasties", []ing{{400, "g", "shortcrust pastry"}, {1, "", "potato"}, {1, "", "onion"}, {1, "", "small swede"}, {1, "", "egg for glazing"}},
		"Dice the vegetables small and season well. Cut pastry circles, fill one half, fold over, crimp the edge and brush with egg.", 200, "40 to 45", 4},
	{"fruit teacake", []ing{{300, "g", "mixed dried fruit"}, {250, "ml", "cold tea"}, {100, "g", "brown sugar"}, {1, "", "egg"}, {225, "g", "self-raising flour"}},
		"Soak the fruit and sugar in the tea overnight, then beat in the egg and flour and pour into a lined loaf tin.", 170, "60 to 70", 10},
}

func fmtQty(q float64) string {
	if q == float64(int(q)) {
		return fmt.Sprint(int(q))
	}
	return strings.TrimRight(strings.TrimRight(fmt.Sprintf("%.1f", q), "0"), ".")
}

func (in ing) String() string {
	if in.unit != "" {
		return fmtQty(in.qty) + " " + in.unit + " " + in.what
	}
	// Counted items: "1 egg", "3 eggs", "half a lemon".
	what := in.what
	if in.qty == 0.5 {
		return "half " + map[bool]string{true: "an ", false: "a "}[strings.ContainsAny(what[:1], "aeiou")] + what
	}
	if in.qty != 1 {
		head, tail, _ := strings.Cut(what, " for ")
		if strings.HasSuffix(head, "o") {
			head += "es"
		} else if !strings.HasSuffix(head, "s") {
			head += "s"
		}
		if tail != "" {
			head += " for " + tail
		}
		what = head
	}
	return fmtQty(in.qty) + " " + what
}

func (g *gen) baking() (string, string, string) {
	rc := recipes[g.r.IntN(len(recipes))]
	switch g.r.IntN(6) {
	case 0, 1:
		ins := g.pick("Give me a simple recipe for "+rc.name+".", "How do I make "+rc.name+" for the bakery counter?", "Write a short recipe card for "+rc.name+".", "What goes into "+rc.name+", and how long do they bake?")
		var parts []string
		for _, i := range rc.ings {
			parts = append(parts, i.String())
		}
		out := "You need " + strings.Join(parts, ", ") + ". " + rc.method + " " +
			fmt.Sprintf("Bake at %d°C for %s minutes.", rc.ovenC, rc.mins)
		if rc.makes > 1 {
			out += fmt.Sprintf(" Makes about %d.", rc.makes)
		}
		return ins, "", out
	case 2:
		f := []float64{0.5, 1.5, 2, 3}[g.r.IntN(4)]
		ins := g.pick(fmt.Sprintf("Scale this %s recipe by %s.", rc.name, fmtQty(f)), fmt.Sprintf("We need %s times the usual batch of %s for the harbour fair. New quantities please.", fmtQty(f), rc.name))
		var a, b []string
		for _, i := range rc.ings {
			a = append(a, i.String())
			j := i
			j.qty *= f
			b = append(b, j.String())
		}
		out := "Scaled quantities: " + strings.Join(b, ", ") + ". " +
			g.pick("Keep the oven temperature the same; larger tins may need a little longer, so test with a skewer.", "Bake in batches rather than one huge tray so it cooks evenly.", "Yeast and raising agents can be scaled the same way for batches this size.")
		return ins, strings.Join(a, ", "), out
	case 3:
		probs := []struct{ q, a string }{
			{"Why did my bread come out dense and heavy?", "Dense bread usually means it did not rise enough. The yeast may have been old, the water too hot, or the dough not kneaded long enough. Let it prove somewhere warm until it has really doubled, and check the yeast's date."},
			{"My scones were flat. What went wrong?", "Flat scones often come from overworking the dough or twisting the cutter. Handle the dough lightly, cut straight down, and make sure the raising agent is fresh. A hot oven helps them rise quickly."},
			{"The middle of my cake sank. Why?", "A sunken middle usually means the oven door was opened too early, the oven was too cool, or there was too much raising agent. Check the temperature with an oven thermometer and wait until the last quarter of the time before peeking."},
			{"Why is my pastry tough?", "Tough pastry has been handled too much or had too much water. Keep everything cold, rub the fat in lightly, add water a spoonful at a time, and rest the pastry in the fridge before rolling."},
			{"My biscuits spread into one big sheet on the tray. How do I stop that?", "Too much butter or sugar, or a warm dough, makes biscuits spread. Chill the dough for twenty minutes, leave plenty of space between them, and use a cool tray for each batch."},
		}
		p := probs[g.r.IntN(len(probs))]
		return g.pick(p.q, "A volunteer asks: "+strings.ToLower(p.q[:1])+p.q[1:]), "", p.a + " " + g.pick("Write down what you change so the next batch is easier to judge.", "", "Small changes, one at a time, work best.")
	case 4:
		c := 10 * g.n(16, 23)
		ins := g.pick(fmt.Sprintf("The recipe says %d°C but our bakery oven is a fan oven. What should I set it to?", c), fmt.Sprintf("Convert %d°C conventional to fan and gas mark.", c))
		gas := map[int]string{160: "3", 170: "3", 180: "4", 190: "5", 200: "6", 210: "6 to 7", 220: "7", 230: "8"}[c]
		out := fmt.Sprintf("For a fan oven, common practice is to go about 20 degrees lower, so set it to %d°C. That is roughly gas mark %s for the conventional temperature. ", c-20, gas) +
			g.pick("Fan ovens vary, so check the first batch a few minutes early.", "If things brown too fast on top, drop another ten degrees.")
		return ins, "", out
	default:
		subs := []struct{ q, a string }{
			{"I have no buttermilk. What can I use?", "Stir a tablespoon of lemon juice or vinegar into 250 ml of milk and leave it for ten minutes until it thickens slightly. Plain yoghurt thinned with a little milk also works."},
			{"Can I use plain flour instead of self-raising?", "Yes. Add about two teaspoons of baking powder to every 225 g of plain flour and sift them together so it is evenly mixed."},
			{"What can I use instead of eggs in a cake?", "For each egg, try three tablespoons of apple purée or half a mashed banana, or a tablespoon of ground flaxseed mixed with three tablespoons of water. The cake will be a little denser."},
			{"Can I swap butter for oil in a recipe?", "In most cakes you can use about 80 ml of oil for every 100 g of butter. It gives a moister crumb but less flavour, and it will not work for pastry or shortbread."},
		}
		s := subs[g.r.IntN(len(subs))]
		return s.q, "", s.a + " " + g.pick("Label the tray so the counter volunteers know what is in it.", "Mention any swap on the allergen card.", "")
	}
}

// ---- paperwork and accounts for small clubs ----

func (g *gen) paperwork() (string, string, string) {
	club := g.pickS(clubs)
	kv := []string{"{c}", club, "{n}", g.pickS(names), "{m}", g.pickS(months)}
	switch g.r.IntN(8) {
	case 0:
		ins := fill(g.pick("What financial records should the treasurer of {c} keep?", "We are a small volunteer group. Which papers do we need to keep for the accounts?", "{n} has just become treasurer of {c}. What records matter most?"), kv...)
		out := join(g.pick("Keep a simple cash book listing every payment in and out with the date, amount and what it was for.", "Record every transaction in one place: date, amount, who, and why."),
			g.pick("File receipts and invoices in date order and number them to match the cash book.", "Keep every receipt, numbered so it can be matched to its line."),
			g.pick("Keep bank statements, the minutes that approved big spending, and a list of members who paid their fees.", "Hold on to bank statements and any grant letters with their conditions."),
			fmt.Sprintf("Most small clubs keep records for at least %d years.", g.n(6, 7)),
			g.pick("A spare copy in the cloud or with another committee member protects against loss.", ""))
		return ins, "", out
	case 1:
		k := g.n(2, 5)
		items := []string{"printer ink", "tea and milk", "stamps", "rope for the display", "raffle prizes", "hall key cut", "cleaning supplies", "paint for the sign"}
		chosen := g.distinct(items, k)
		var lines []string
		tot := 0
		for _, it := range chosen {
			p := 50 * g.n(4, 60)
			tot += p
			lines = append(lines, fmt.Sprintf("%s %s", it, money(p)))
		}
		ins := fill(g.pick("Check this expense claim and write the note for the treasurer.", "Add up {n}'s expenses and say what the treasurer needs."), kv...)
		out := fmt.Sprintf("The claim comes to %s for %d items. ", money(tot), k) +
			g.pick("Check there is a receipt for each one and that the spending was agreed by the committee.", "Pay it by bank transfer so there is a record, and staple the receipts to the claim form.") + " " +
			fill(g.pick("Record it in the cash book under general expenses for {m}.", "Ask a second committee member to sign it off."), kv...)
		return ins, "Expense claim: " + strings.Join(lines, "; "), out
	case 2:
		subs, don, ev := 10*g.n(30, 150), 10*g.n(5, 120), 10*g.n(20, 200)
		ins1, ins2, ins3 := 10*g.n(15, 80), 10*g.n(10, 60), 10*g.n(5, 90)
		inc, exp := subs+don+ev, ins1+ins2+ins3
		ins := fill(g.pick("Write a short summary of the year's accounts for the annual meeting of {c}.", "Turn these figures into a plain income and spending summary."), kv...)
		in := fmt.Sprintf("Membership fees £%d, donations £%d, events £%d. Insurance £%d, hall hire £%d, equipment £%d.", subs, don, ev, ins1, ins2, ins3)
		res := inc - exp
		word := "surplus"
		if res < 0 {
			word, res = "deficit", -res
		}
		out := fmt.Sprintf("Income for the year was £%d: £%d from membership fees, £%d from donations and £%d from events. Spending was £%d, of which insurance was £%d, hall hire £%d and equipment £%d. That leaves a %s of £%d. ",
			subs+don+ev, subs, don, ev, exp, ins1, ins2, ins3, word, res) +
			g.pick("The full accounts and bank statements are available to any member who asks.", "An independent member has checked the figures against the bank statements.")
		return ins, in, out
	case 3:
		start, in1, out1 := 50*g.n(4, 20), 50*g.n(1, 12), 50*g.n(1, 10)
		count := start + in1 - out1 - 50*g.n(0, 2)
		exp := start + in1 - out1
		ins := g.pick("Reconcile the petty cash tin.", "Does the petty cash add up?", "Check the cash tin against the book.")
		in := fmt.Sprintf("Float at start %s. Cash in %s. Cash paid out %s. Counted in tin %s.", money(start), money(in1), money(out1), money(count))
		out := fmt.Sprintf("Expected balance: %s + %s - %s = %s. Counted: %s. ", money(start), money(in1), money(out1), money(exp), money(count))
		if exp == count {
			out += "The tin balances. Sign and date the book."
		} else {
			out += fmt.Sprintf("The tin is %s short. Look for a missing receipt first, then note the difference in the book and tell the treasurer.", money(exp-count))
		}
		return ins, in, out
	case 4:
		fee := 5 * g.n(2, 8)
		ins := fill(g.pick("Write a friendly reminder to members of {c} that fees are due.", "Draft the membership renewal email for {m}."), kv...)
		out := fill(fmt.Sprintf("Dear member, it is time to renew your membership of {c}. The fee is still £%d for the year and is due by the end of {m}. ", fee), kv...) +
			g.pick("You can pay by bank transfer using your name as the reference, or in cash at the next meeting. ", "Pay at the next meeting or by transfer, and the treasurer will send a receipt. ") +
			g.pick("If the fee is a difficulty, please talk to any committee member in confidence. Thank you for your support.", "Thank you for everything you do for the club.")
		return ins, "", out
	case 5:
		ins := fill(g.pick("What should the outgoing treasurer hand over to the new one?", "{n} is stepping down as treasurer of {c}. Make a handover checklist."), kv...)
		out := join(g.pick("Hand over the cash book, receipts file and the latest bank statements.", "Pass on all account books and the receipts for the current year."),
			g.pick("Change the bank signatories at the same time, so the old treasurer is removed and the new one added.", "Update the bank mandate with the new signatories."),
			g.pick("List any bills due soon, such as insurance renewal and hall hire.", "Note regular payments and when they fall due."),
			g.pick("Give the passwords for online banking through a safe route, not by email.", "Agree a short meeting to go through the year so far."))
		return ins, "", out
	case 6:
		amt := 5 * g.n(4, 100)
		ins := fill(g.pick("Write a thank-you letter with a receipt for a donation to {c}.", "A local business gave us a donation. Draft the acknowledgement."), kv...)
		in := fmt.Sprintf("Donor: %s. Amount £%d. Received %d %s.", g.pick("The Harbour Chandlery", "Mrs E. Tulloch", "Quayside Fish Bar", "an anonymous neighbour"), amt, g.n(1, 28), g.pickS(months))
		out := fmt.Sprintf("Thank you very much for your generous gift of £%d. ", amt) + g.pick("It will go towards new equipment and keeping our activities running. ", "It makes a real difference to a small volunteer group like ours. ") +
			"This letter is your receipt: " + in[strings.Index(in, "Amount"):] + " " + fill("With warm thanks from everyone at {c}.", kv...)
		return ins, in, out
	default:
		ins := fill(g.pick("How do we set a simple budget for {c} next year?", "Help us plan next year's spending."), kv...)
		out := join(g.pick("Start from last year's actual income and spending, line by line.", "Use last year's accounts as the starting point."),
			g.pick("Add known changes, such as a higher insurance quote or a planned equipment purchase.", "Put in any price rises you already know about."),
			g.pick("Keep a reserve of around three months' running costs, a common practice for small groups.", "Aim to keep some money aside for emergencies."),
			g.pick("Let the committee agree the budget and compare it with actual figures every quarter.", "Review it at each committee meeting."))
		return ins, "", out
	}
}

// ---- garden care ----

var crops = []struct{ name, sow, tip string }{
	{"tomatoes", "sow indoors in March and plant out after the last frost, usually late May", "pinch out the side shoots and feed weekly once the first fruits set"},
	{"runner beans", "sow outside in late May or June, or in pots indoors a few weeks earlier", "give them a tall frame of canes and water well when they flower"},
	{"early potatoes", "chit them in February and plant in late March or April", "earth them up as the shoots appear to protect against frost"},
	{"carrots", "sow thinly from April to July in light, stone-free soil", "cover with fine mesh to keep carrot fly off"},
	{"lettuce", "sow little and often from March to August", "pick outer leaves regularly and keep them watered in dry weather"},
	{"garlic", "plant cloves in October or November", "keep weeds down and lift the bulbs when the leaves turn yellow in summer"},
	{"strawberries", "plant new runners in late summer or early autumn", "put straw under the fruit and net them against birds"},
	{"leeks", "sow in spring and transplant in early summer when pencil thick", "drop them into deep holes and water in without filling the hole"},
}

func (g *gen) garden() (string, string, string) {
	switch g.r.IntN(7) {
	case 0, 1:
		c := crops[g.r.IntN(len(crops))]
		ins := g.pick("When should I plant "+c.name+"?", "How do I grow "+c.name+" in the allotment?", "Any advice for growing "+c.name+" in a windy seaside garden?", "Give me the basics for "+c.name+".")
		out := "For " + c.name + ", " + c.sow + ". " + upperFirst(c.tip) + ". " +
			g.pick("In an exposed coastal plot, a low windbreak of netting makes a big difference.", "Add plenty of compost before planting.", "Rotate where you grow them each year to avoid disease.")
		return ins, "", out
	case 2:
		pests := []struct{ q, a string }{
			{"Slugs are eating my seedlings.", "Go out at dusk with a torch and pick them off, and use beer traps sunk into the soil. Copper tape round pots, grit around plants and encouraging frogs and birds all help. Grow strong plants in pots first so they are tougher when planted out."},
			{"My roses have greenfly all over the new shoots.", "Squash small colonies by hand or wash them off with a strong jet of water. Ladybirds and blue tits will eat them, so avoid sprays that harm them. A weak soap solution works on bad patches."},
			{"The potato leaves have brown patches and are going mushy.", "That sounds like blight, which spreads in warm, wet weather. Cut off and remove the leaves and stems, do not compost them, and lift the potatoes two weeks later. Choose resistant varieties next year."},
			{"Something is making holes in my cabbage leaves.", "Caterpillars of cabbage white butterflies are the usual cause. Check under the leaves for eggs and caterpillars and remove them, and cover the plants with fine netting from spring."},
		}
		p := pests[g.r.IntN(len(pests))]
		return g.pick("What can I do? ", "Garden question: ", "") + p.q, "", p.a
	case 3:
		ins := g.pick("How often should I water the vegetable beds in a dry spell?", "What is the best way to water in a drought?", "We have a hosepipe ban. How do we keep the allotment going?")
		out := join(g.pick("Water deeply once or twice a week rather than a little every day, so roots grow down.", "A good soak every few days is better than a daily sprinkle."),
			g.pick("Water early in the morning or in the evening, at the base of the plants.", "Aim the can at the soil, not the leaves, and water when it is cool."),
			g.pick("Mulch with compost or grass clippings to keep moisture in.", "A thick mulch cuts the need for water a lot."),
			g.pick("Collect rainwater in butts from every shed roof.", "Prioritise seedlings, new plantings and crops that are flowering or fruiting."))
		return ins, "", out
	case 4:
		plant := g.pick("apple trees", "roses", "lavender", "fuchsia hedges", "blackcurrants")
		adv := map[string]string{
			"apple trees":    "Prune apple trees in winter while they are dormant. Remove dead, diseased and crossing branches first, then thin the centre so air and light get in. Never take more than about a quarter of the tree in one year.",
			"roses":          "Prune most roses in late winter or early spring. Cut back to an outward-facing bud, remove weak and dead stems, and shorten strong stems by about a third to a half.",
			"lavender":       "Trim lavender straight after flowering in late summer, cutting off the flower stalks and a little of the leafy growth. Do not cut into old bare wood, because it rarely regrows.",
			"fuchsia hedges": "Cut fuchsia hedges back in spring once new buds show, removing winter damage. In mild coastal gardens they only need a light trim to keep the shape.",
			"blackcurrants":  "Prune blackcurrants in winter by removing about a third of the oldest stems at the base. Fruit comes on younger wood, so this keeps the bush productive.",
		}[plant]
		return g.pick("When and how should I prune "+plant+"?", "Pruning "+plant+": what is the right way?", "Do my "+plant+" need cutting back?"), "", adv + " " + g.pick("Use clean, sharp tools.", "Burn or bin diseased wood rather than composting it.", "")
	case 5:
		ins := g.pick("Which hedge plants survive salty wind on the sea front?", "Our garden is right above the harbour. What grows in salt spray?", "Suggest a windbreak for a coastal garden.")
		out := join(g.pick("Escallonia, sea buckthorn, griselinia and tamarisk all cope well with salt spray.", "Good choices for salty sites are escallonia, griselinia, sea buckthorn and hebe."),
			g.pick("A hedge that filters the wind is better than a solid wall, which causes damaging eddies behind it.", "Choose a permeable windbreak: it slows the wind rather than bouncing it over."),
			g.pick("Plant small specimens in autumn and protect them with netting for the first winter.", "Young plants establish faster than large ones in exposed sites."))
		return ins, "", out
	default:
		ins := g.pick("How do I make good compost?", "Why is my compost heap slimy and smelly?", "What should go on the compost heap?")
		out := join(g.pick("Mix roughly equal amounts of green material, like grass and vegetable peelings, and brown material, like cardboard, straw and dry leaves.", "Balance wet greens with dry browns such as shredded cardboard."),
			g.pick("A slimy, smelly heap has too much green and not enough air; add brown material and turn it.", "Turn the heap every few weeks so air gets in."),
			g.pick("Keep out meat, cooked food and diseased plants.", "Avoid perennial weed roots and anything cooked."),
			g.pick("Seaweed from the beach, rinsed, is an excellent addition.", "It is ready when it is dark and crumbly, usually after six months to a year."))
		return ins, "", out
	}
}

// ---- children's stories ----

var heroes = []struct{ who, name string }{
	{"a small puffin", "Pip"}, {"a lighthouse cat", "Juniper"}, {"a little tugboat", "Dot"}, {"a shy crab", "Sidney"},
	{"a seal pup", "Bramble"}, {"an old ferry boat", "Tilly"}, {"a seagull with a bent feather", "Gus"}, {"a hedgehog from the bakery garden", "Crumb"},
}

func (g *gen) stories() (string, string, string) {
	h := heroes[g.r.IntN(len(heroes))]
	age := g.n(3, 8)
	goal := g.pick("wanted to see the lights on the far island", "lost a favourite shell in the harbour", "was afraid of the dark", "wanted to help during a storm", "could not find any friends", "wished to be brave")
	kid := g.pickS(children)
	hs := [][2]string{{"a wise old heron", "the heron"}, {"a girl called " + kid, kid}, {"the ferry skipper", "the skipper"}, {"a family of otters", "the otters"}, {"the baker's dog", "the baker's dog"}}
	hp := hs[g.r.IntN(len(hs))]
	helper, friend := hp[0], hp[1]
	ins := g.pick(fmt.Sprintf("Write a short bedtime story for a %d-year-old about %s called %s who %s.", age, h.who, h.name, goal),
		fmt.Sprintf("Tell a gentle story about %s named %s. Keep it under 100 words.", h.who, h.name),
		fmt.Sprintf("Make up a story for a child who loves the seaside, starring %s called %s.", h.who, h.name))
	open := g.pick(
		fmt.Sprintf("Once upon a time, in a harbour town with blue and yellow houses, there lived %s called %s.", h.who, h.name),
		fmt.Sprintf("At the end of the long stone pier lived %s named %s.", h.who, h.name),
		fmt.Sprintf("Every morning, when the gulls began to call, %s the %s woke up with a big idea.", h.name, strings.TrimPrefix(strings.TrimPrefix(h.who, "a "), "an ")))
	mid := fmt.Sprintf("%s %s. ", h.name, goal) + g.pick(
		"One windy evening, "+h.name+" set off alone, but the waves were bigger than expected.",
		"It was hard, and at first "+h.name+" wanted to give up.",
		"Everyone said it could not be done, but "+h.name+" decided to try anyway.")
	help := fmt.Sprintf(" Then %s came along and said, \"%s\"", helper, g.pick("Let's do it together.", "Being brave just means trying while you are scared.", "Follow the lighthouse, and you will find your way.", "Friends are found by being one."))
	end := g.pick(
		fmt.Sprintf(" And so %s learned that nobody has to do everything alone. The end.", h.name),
		fmt.Sprintf(" That night %s fell asleep smiling, listening to the sea. Goodnight.", h.name),
		fmt.Sprintf(" From then on, %s and %s were the best of friends, and every evening they watched the boats come home.", h.name, friend))
	return ins, "", open + " " + mid + help + end
}

// ---- spreadsheet formulas ----

var sheets = []struct{ what, col, unit string }{
	{"daily passenger counts", "passengers", ""},
	{"bake sale takings", "takings", "£"},
	{"members' fees paid", "amount paid", "£"},
	{"fuel receipts for the boats", "litres", ""},
	{"rainfall at the allotment", "rain (mm)", ""},
	{"volunteer hours", "hours", ""},
	{"raffle ticket sales", "tickets sold", ""},
}

func (g *gen) spreadsheet() (string, string, string) {
	sh := sheets[g.r.IntN(len(sheets))]
	n := g.n(8, 120)
	last := n + 1
	col := string(rune('B' + g.r.IntN(4)))
	kv := []string{"{w}", sh.what, "{c}", sh.col, "{C}", col, "{L}", fmt.Sprint(last)}
	switch g.r.IntN(9) {
	case 0:
		ins := fill(g.pick("How do I add up the {c} column in my sheet of {w}?", "I have {w} in column {C}, rows 2 to {L}. What formula gives the total?"), kv...)
		return ins, "", fill("Use =SUM({C}2:{C}{L}) in an empty cell below the data. ", kv...) +
			fill(g.pick("If you add rows later, insert them above the total so the range grows automatically.", "To total a whole column without worrying about new rows, =SUM({C}:{C}) works as long as the total is in another column.", "Check the cells are numbers, not text, or they will be skipped."), kv...)
	case 1:
		th := 10 * g.n(1, 30)
		kv = append(kv, "{t}", fmt.Sprint(th))
		ins := fill(g.pick("Count how many rows in my {w} are over {t}.", "Which formula counts the entries in column {C} greater than {t}?"), kv...)
		return ins, "", fill("Use =COUNTIF({C}2:{C}{L},\">{t}\"). The condition goes in quotes. To count entries of {t} or more, use \">={t}\" instead.", kv...)
	case 2:
		ins := fill(g.pick("How do I get the average of the {c} column, ignoring blanks?", "What formula gives the average of my {w}?"), kv...)
		return ins, "", fill("=AVERAGE({C}2:{C}{L}) ignores empty cells but counts zeros. If zeros mean 'no data', use =AVERAGEIF({C}2:{C}{L},\"<>0\") instead. ", kv...) +
			fill(g.pick("Wrap it in ROUND, for example =ROUND(AVERAGE({C}2:{C}{L}),1), to show one decimal place.", "Format the cell to show as many decimals as you need."), kv...)
	case 3:
		th := 10 * g.n(1, 30)
		kv = append(kv, "{t}", fmt.Sprint(th))
		ins := fill(g.pick("I want a column that says \"high\" when {c} is above {t} and \"normal\" otherwise.", "Write an IF formula to flag {w} over {t}."), kv...)
		return ins, "", fill("In the first row of an empty column, type =IF({C}2>{t},\"high\",\"normal\") and fill it down to row {L}. ", kv...) +
			g.pick("You can nest another IF for a third level, such as \"very high\".", "Add conditional formatting to colour the \"high\" rows.")
	case 4:
		ins := fill(g.pick("How do I look up a member's phone number from their name on another sheet?", "I have names in column A of a sheet called Members and phone numbers in column C. How do I fetch a number by name?"), kv...)
		return ins, "", g.pick("Use =VLOOKUP(A2,Members!A:C,3,FALSE). The 3 means the third column of the range, and FALSE asks for an exact match.",
			"=XLOOKUP(A2,Members!A:A,Members!C:C,\"not found\") finds the name in column A and returns the matching phone number, with a message if it is missing.") + " " +
			g.pick("Check for stray spaces in names, because they stop matches.", "Names must be spelled exactly the same on both sheets.")
	case 5:
		ins := fill(g.pick("How do I work out the percentage change in {c} from last year to this year?", "Column B is last year's {c}, column C is this year's. Formula for the change as a percentage?"), kv...)
		return ins, "", "Use =(C2-B2)/B2 and format the cell as a percentage. A negative result means a fall. " +
			g.pick("Wrap it as =IFERROR((C2-B2)/B2,\"\") to avoid errors where last year is zero.", "Fill it down for every row.")
	case 6:
		ins := g.pick("How do I work out the number of days between two dates in a spreadsheet?", "Column A has start dates and column B end dates. How many days between them?", "Formula for how many days until a membership expires?")
		return ins, "", "Subtract one from the other: =B2-A2 gives the number of days, as long as both cells are real dates. " +
			g.pick("For days from today, use =B2-TODAY().", "Use =DATEDIF(A2,B2,\"m\") for whole months instead.", "Format the result as a number, not a date.")
	case 7:
		ins := g.pick("Column B has departure times and column C arrival times. How do I get the journey length?", "How do I add up hours and minutes so the total can go over 24 hours?", "How do I subtract two times in a spreadsheet?")
		return ins, "", "=C2-B2 gives the duration when both cells are times. " +
			g.pick("Format the result as [h]:mm so totals over 24 hours display correctly.", "If a trip passes midnight, use =MOD(C2-B2,1).", "Multiply by 24 to turn it into decimal hours: =(C2-B2)*24.")
	default:
		ins := g.pick("How do I join first and last names from two columns?", "I have first names in A and surnames in B. How do I combine them with a space?")
		return ins, "", "Use =A2&\" \"&B2, or =CONCAT(A2,\" \",B2). " + g.pick("=TRIM() around it removes extra spaces.", "Fill it down, then copy and paste as values if you want to delete the originals.")
	}
}

// ---- first aid ----

func (g *gen) firstaid() (string, string, string) {
	where := g.pick("on the quay", "at the bakery", "in the allotment", "on a school trip", "at the club hut", "on the ferry")
	kv := []string{"{w}", where, "{n}", g.pickS(names)}
	type fa struct {
		q []string
		a []string
	}
	items := []fa{
		{[]string{"Someone cut their hand {w}. What should I do?", "First aid for a small cut?", "{n} has a bleeding finger {w}."},
			[]string{"Press firmly on the cut with a clean pad or cloth for several minutes to stop the bleeding.", "Rinse it under clean running water, pat it dry and cover it with a plaster or sterile dressing.", "Get medical help if the bleeding will not stop, the cut is deep or gaping, or something is stuck in it."}},
		{[]string{"What is the first aid for a burn from a hot oven tray?", "{n} burned their arm {w}. What now?", "How do you treat a minor burn?"},
			[]string{"Cool the burn under cool running water for at least twenty minutes.", "Remove rings or tight clothing near it unless they are stuck to the skin.", "Cover it loosely with cling film or a clean plastic bag, and do not use creams or butter.", "Seek medical advice for large burns, burns on the face or hands, or any burn on a child."}},
		{[]string{"Someone twisted their ankle {w}. How do we help?", "First aid for a sprained ankle?", "{n} went over on an ankle {w}."},
			[]string{"Help them sit down and rest the ankle.", "Put a cold pack or ice wrapped in a cloth on it for up to twenty minutes.", "Support it with a bandage that is firm but not tight, and raise the leg.", "If they cannot put weight on it, or it looks misshapen, it may be broken and needs checking."}},
		{[]string{"What should I do for a nosebleed?", "A child has a nosebleed {w}.", "How do you stop a nosebleed?"},
			[]string{"Sit them down and lean them forward, not back.", "Pinch the soft part of the nose for ten minutes and breathe through the mouth.", "If it is still bleeding after thirty minutes, get medical help."}},
		{[]string{"Someone was stung by a wasp {w}.", "What is the first aid for a bee sting?", "How do we treat an insect sting?"},
			[]string{"If a sting is left in the skin, scrape it out sideways with a fingernail or card.", "Cool the area with a cold compress to reduce swelling.", "Call the emergency services at once if they have trouble breathing, swelling of the face or mouth, or feel faint, because that may be a severe allergic reaction."}},
		{[]string{"A child was stung by a jellyfish while paddling.", "How do you treat a jellyfish sting?", "Jellyfish sting {w}. What do we do?"},
			[]string{"Get them out of the water and rinse the area with seawater, not fresh water.", "Lift off any tentacles with tweezers or the edge of a card.", "Soak the area in hot water that is comfortable to touch, or use a hot pack, to ease the pain.", "Get help if the sting covers a large area or they feel unwell."}},
		{[]string{"Someone fell into the harbour and is shivering badly. What do we do?", "First aid for someone who is very cold after falling in the water?", "How do we help a person with hypothermia {w}?"},
			[]string{"Get them somewhere sheltered and call the emergency services.", "Remove wet clothing and wrap them in dry blankets, covering the head.", "Give warm sweet drinks if they are fully awake, but no alcohol.", "Warm them gradually; do not rub their limbs or use a hot bath."}},
		{[]string{"What helps with seasickness?", "A passenger feels seasick. What can we suggest?", "How can we help someone who is sick on a boat trip?"},
			[]string{"Keep them on deck in the fresh air, looking at the horizon.", "Sips of water and plain biscuits help; avoid strong smells and reading.", "Stay near the middle of the boat, where there is less movement.", "Travel sickness tablets work best if taken before the trip."}},
		{[]string{"Someone has a splinter in their hand.", "How do you remove a splinter?", "{n} has a wood splinter from the pier railing."},
			[]string{"Clean the area with soap and water.", "Use clean tweezers to grip the splinter close to the skin and pull it out at the same angle it went in.", "Squeeze gently to make it bleed a little, then clean and cover it.", "If it is deep or breaks off, get a nurse or doctor to remove it."}},
	}
	it := items[g.r.IntN(len(items))]
	ins := fill(g.pickS(it.q), kv...)
	a := append([]string(nil), it.a...)
	if len(a) > 3 && g.chance(0.4) {
		a = a[:len(a)-1]
	}
	extra := g.pick("", "Write what happened in the first aid log.", "Replace anything you use from the first aid box.", "If in doubt, call for medical help.")
	return ins, "", join(append(a, extra)...)
}

// ---- knot tying ----

var knots = []struct{ name, use, steps, mistake string }{
	{"bowline", "a fixed loop that will not slip, for mooring lines and rescue", "Make a small loop in the standing part, bring the end up through it, round behind the standing part, and back down through the small loop. Pull tight.", "The usual mistake is passing the end round the wrong side, which makes a loop that slips."},
	{"clove hitch", "tying a line quickly to a post or rail, for fenders", "Pass the end round the post, cross over itself, go round again and tuck the end under the last turn.", "It can work loose if the load keeps changing, so add a half hitch for security."},
	{"round turn and two half hitches", "tying a mooring line to a ring or post under load", "Take two full turns round the ring, then tie two half hitches round the standing part.", "Make sure both half hitches go the same way, or they form a weaker knot."},
	{"figure-of-eight", "a stopper at the end of a line so it cannot run out of a block", "Make a loop, pass the end behind the standing part and back down through the loop, so it looks like an eight.", "Leave a short tail so it does not shake loose."},
	{"cleat hitch", "making a line fast to a cleat on the pontoon or the boat", "Take a full turn round the base of the cleat, then make figure-of-eight turns over the horns and finish with a locking hitch.", "Too many turns just make it hard to undo in a hurry."},
	{"sheet bend", "joining two ropes, even of different thickness", "Make a bight in the thicker rope, pass the thinner end up through it, round behind both parts, and tuck it under itself.", "Both tails should end up on the same side of the knot."},
	{"reef knot", "tying reef points or a bandage, not for joining ropes under load", "Tie left over right, then right over left, so the knot lies flat.", "Tying it the same way twice gives a granny knot, which slips."},
	{"rolling hitch", "pulling along a rope or spar, or taking the load off a jammed line", "Make two turns round the spar, crossing towards the direction of pull, then finish with a hitch on the other side.", "The turns must be on the side the load comes from."},
}

func (g *gen) knots() (string, string, string) {
	k := knots[g.r.IntN(len(knots))]
	ctx := g.pick("", "", "Quick question: ", "For the volunteers' training night: ", "We are tying up the "+g.pickS(vessels)+" at "+g.pickS(piers)+". ", "Sea scouts session: ")
	switch g.r.IntN(5) {
	case 0, 1:
		ins := ctx + g.pick("How do I tie a "+k.name+"?", "Explain the "+k.name+" step by step.", "Teach a new crew member the "+k.name+".")
		return ins, "", "The " + k.name + " is used for " + k.use + ". " + k.steps + " " + g.pick(k.mistake, "Practise it a few times with your eyes closed.", "")
	case 2:
		ins := ctx + g.pick("Which knot should I use for "+k.use+"?", "What is a good knot for "+k.use+"?")
		return ins, "", "A " + k.name + " is the usual choice. " + k.steps + " " + k.mistake
	case 3:
		ins := g.pick("My "+k.name+" keeps coming undone. Why?", "What goes wrong when people tie a "+k.name+"?")
		return ins, "", k.mistake + " " + g.pick("Dress the knot so no parts cross, then pull every strand tight.", "Check the knot before you trust any load to it.") + " It is meant for " + k.use + "."
	default:
		ins := g.pick("How should we look after our ropes?", "How do you stop the end of a rope fraying?", "How do you coil a rope so it does not tangle?", "Tips for teaching children to tie knots?")
		var out string
		switch {
		case strings.Contains(ins, "fraying"):
			out = "Whip the end with thin twine, or for synthetic rope melt it carefully with a flame and shape it while warm. A dab of tape is only a temporary fix. Then the rope end will not unravel."
		case strings.Contains(ins, "coil"):
			out = "Coil with the lay of the rope, usually clockwise, letting each loop twist slightly so it lies flat. Finish by wrapping the end round the coil and passing a loop through the top, so it can hang on a hook."
		case strings.Contains(ins, "children"):
			out = "Use two ropes of different colours so they can see which end goes where. Start with the figure-of-eight, then the reef knot. Tell a story for each step, such as the rabbit coming out of the hole for the bowline, and praise every try."
		default:
			out = "Rinse ropes in fresh water to remove salt and grit, dry them out of direct sun, and store them coiled and off the floor. Check for worn or chafed sections and cut them out or replace the rope."
		}
		return ins, "", out
	}
}

// ---- rows that mix two topics ----

// mixed returns a row that honestly belongs to two topics, labelled "a+b"
// with the dominant topic first, so the demo can show how such rows rank.
func (g *gen) mixed(i int) (topic, ins, in, out string) {
	isl, v, pier := g.pickS(islands), g.pickS(vessels), g.pickS(piers)
	switch i % 9 {
	case 0:
		lw := 11*60 + 5*g.n(0, 36)
		sail := []int{lw - 150 + 5*g.n(0, 6), lw - 30 + 5*g.n(0, 6), lw + 90 + 5*g.n(0, 6), lw + 180 + 5*g.n(0, 6)}
		var hit, ok []string
		for _, s := range sail {
			if s >= lw-120 && s <= lw+120 {
				hit = append(hit, hm(s))
			} else {
				ok = append(ok, hm(s))
			}
		}
		ins = "Write tomorrow's noticeboard message explaining the low tide and which sailings are affected."
		in = fmt.Sprintf("Low water %s, 0.%d m. The %s landing cannot be used within two hours of low water. Sailings to %s: %s.", hm(lw), g.n(3, 9), isl, isl, fmtTimes(sail))
		out = fmt.Sprintf("Tomorrow low water is at %s, and the %s landing cannot be used from %s to %s. ", hm(lw), isl, hm(lw-120), hm(lw+120))
		if len(hit) > 0 {
			out += fmt.Sprintf("The %s %s will land passengers at the beach steps instead, so allow extra time. ", list(hit), map[bool]string{true: "sailing", false: "sailings"}[len(hit) == 1])
		}
		if len(ok) > 0 {
			out += fmt.Sprintf("The %s %s as normal. ", list(ok), map[bool]string{true: "sailing runs", false: "sailings run"}[len(ok) == 1])
		}
		out += "Please ask at the desk if you need help with the steps."
		return "dispatch+weather", ins, in, out
	case 1:
		t := 8*60 + 15*g.n(0, 30)
		ins = fmt.Sprintf("The %s's engine overheated on the %s run to %s and she has come back to %s. Write a short passenger update and list what the engine volunteers should check first.", v, hm(t), isl, pier)
		out = fmt.Sprintf("Passenger update: the %s sailing to %s has returned to %s with an engine problem. Everyone is safe, and a replacement boat will leave at %s. ", hm(t), isl, pier, hm(t+45)) +
			"For the engine volunteers: check the raw-water strainer and seacock, then the impeller, the coolant level and the pump belt, and note the engine hours in the log."
		return "dispatch+engine", ins, "", out
	case 2:
		v = vessels[i%len(vessels)]
		ins = "Our dispatch sheet has one row per sailing, with the vessel name in column C. What formula counts the sailings made by one boat, and how should the desk report it?"
		out = fmt.Sprintf("Use =COUNTIF(C:C,\"%s\") to count the %s's sailings, or put the name in a cell such as F1 and use =COUNTIF(C:C,F1). ", v, v) +
			"At the end of each day, copy the counts for every boat into the weekly summary so the rota coordinator can see how hard each boat and crew worked."
		return "spreadsheet+dispatch", ins, "", out
	case 3:
		tk, cost := 5*g.n(30, 90), 5*g.n(8, 25)
		ins = fmt.Sprintf("Our bake sale took £%d and the ingredients cost £%d. How do we record it in the club accounts, and what sold best?", tk, cost)
		in = "Sold out: cheese scones, lemon drizzle cake. Left over: seeded loaf."
		out = fmt.Sprintf("Record the £%d takings as event income and the £%d of ingredients as event costs, with the shop receipts attached, which shows a profit of £%d. ", tk, cost, tk-cost) +
			"Cheese scones and lemon drizzle sold out, so bake more of those next time and fewer seeded loaves."
		return "paperwork+baking", ins, in, out
	case 4:
		ins = "Which knot do you use to tie a triangular bandage as an arm sling, and how do you make the sling?"
		out = "Use a reef knot, because it lies flat and is comfortable against the neck. Place the bandage under the injured arm with the point towards the elbow, bring the lower end up over the other shoulder, tie it at the hollow above the collarbone, and pin or twist the point at the elbow. Check the fingers stay warm and pink."
		if i >= 9 {
			ins = "A volunteer got a rope burn on their palm while easing a mooring line. What is the first aid, and how can we avoid it?"
			out = "Cool the burn under cool running water for at least twenty minutes, then cover it loosely with a clean non-fluffy dressing. To avoid it, wear gloves when handling loaded lines and take a turn round a cleat so the cleat holds the load, not your hands."
		}
		return "firstaid+knots", ins, "", out
	case 5:
		h := heroes[i%len(heroes)]
		ins = fmt.Sprintf("Write a short story for children that teaches how to tie a bowline, starring %s called %s.", h.who, h.name)
		out = fmt.Sprintf("%s lived by the harbour and wanted to help moor the boats. The old skipper showed %s a trick. \"Here is the rabbit's hole,\" she said, making a small loop. \"The rabbit comes up out of the hole, runs round the tree, and goes back down the hole.\" %s tried it, pulled tight, and the loop held firm. That evening the %s was tied up safe and sound, all thanks to %s's bowline.", h.name, h.name, h.name, v, h.name)
		return "stories+knots", ins, "", out
	case 6:
		temp := i % 7 // the two copies of this case land on either side of the frost line
		ins = fmt.Sprintf("The forecast says a clear, calm night with a low of %d°C. Is it safe to plant out the tomatoes?", temp)
		if temp <= 3 {
			out = fmt.Sprintf("Not yet. Clear, calm nights are when frost forms, and at %d°C in the air it can be colder near the ground. Keep the tomatoes inside or under fleece for another week and watch the forecast.", temp)
		} else {
			out = fmt.Sprintf("It should be all right at %d°C, but tomatoes dislike cold nights. Harden them off first, plant them in the afternoon and keep a sheet of fleece handy in case the forecast changes.", temp)
		}
		return "garden+weather", ins, "", out
	case 7:
		ins = "I keep a sheet of members with the fee due in column B and the amount paid in column C. How do I list who still owes money, and what do I tell the committee?"
		out = "In column D use =B2-C2 to show what each member owes, then =SUMIF(D:D,\">0\") for the total outstanding and =COUNTIF(D:D,\">0\") for the number of members. Report both numbers at the committee meeting, without names, and send the individual reminders privately."
		if i >= 9 {
			ins = "The treasurer logs every payment with the date in column A and the amount in column B. How do I total one month's fees for the committee report?"
			out = "Put the first day of the month in E1 and use =SUMIFS(B:B,A:A,\">=\"&E1,A:A,\"<\"&EDATE(E1,1)). That adds every payment from the first of the month up to, but not including, the first of the next. Quote the total in the report and keep the sheet with the receipts."
		}
		return "paperwork+spreadsheet", ins, "", out
	default:
		v = vessels[i%len(vessels)] // distinct for the two copies of this case
		ins = fmt.Sprintf("A gale is forecast for tonight. What should we do to the %s's engine and moorings before we leave her?", v)
		out = "Double up the mooring lines with chafe protection where they cross the fairleads, and add extra fenders. Close the engine seacocks, check the bilge pump works and that the batteries are charged, and make sure the fuel tank is well filled so less condensation forms. Check her again as soon as the wind drops."
		return "engine+weather", ins, "", out
	}
}

// ---- near duplicates ----

var contractions = [][2]string{{"do not", "don't"}, {"it is", "it's"}, {"you will", "you'll"}, {"is not", "isn't"}, {"cannot", "can't"}, {"There are", "There're"}, {"will not", "won't"}}

// nearCopy rewrites a row the way people re-submit the same example: a
// polite prefix, dropped punctuation, contractions, or a lost last sentence.
func (g *gen) nearCopy(r row) row {
	c := r
	switch g.r.IntN(5) {
	case 0:
		c.Instruction = "Please " + strings.ToLower(c.Instruction[:1]) + c.Instruction[1:]
	case 1:
		c.Instruction = strings.TrimRight(c.Instruction, ".?") + g.pick(" thanks", "!", " please.")
	case 2:
		c.Instruction = strings.ToLower(c.Instruction)
	case 3:
		for _, p := range contractions {
			c.Output = strings.ReplaceAll(c.Output, p[0], p[1])
		}
	default:
		if i := strings.LastIndex(strings.TrimRight(c.Output, ". "), ". "); i > 0 {
			c.Output = c.Output[:i+1]
		}
	}
	if c == r || words(c) < minWords {
		c = r
		c.Instruction = strings.TrimSpace(c.Instruction) + " "
		c.Output = "  " + c.Output
	}
	return c
}

func main() {
	g := newGen(0x5eed_f3bb, 1)
	topics := map[string]func() (string, string, string){
		"dispatch": g.dispatch, "engine": g.engine, "weather": g.weather, "baking": g.baking, "paperwork": g.paperwork,
		"garden": g.garden, "stories": g.stories, "spreadsheet": g.spreadsheet, "firstaid": g.firstaid, "knots": g.knots,
	}
	seen := map[string]bool{}
	key := func(r row) string { return r.Instruction + "\x00" + r.Input + "\x00" + r.Output }
	ok := func(r row) bool { w := words(r); return !seen[key(r)] && w >= minWords && w <= maxWords }

	var pool []row
	for _, p := range plan {
		for i := 0; i < p.n; i++ {
			for try := 0; ; try++ {
				ins, in, out := topics[p.topic]()
				r := row{Instruction: ins, Input: in, Output: out, Topic: p.topic}
				if ok(r) {
					seen[key(r)] = true
					pool = append(pool, r)
					break
				}
				if try > 2000 {
					log.Fatalf("%s: cannot find a fresh row of the right length after %d tries", p.topic, try)
				}
			}
		}
	}
	for i := 0; i < nMixed; i++ {
		t, ins, in, out := g.mixed(i)
		r := row{Instruction: ins, Input: in, Output: out, Topic: t}
		if !ok(r) {
			log.Fatalf("mixed row %d unusable (%d words): %q", i, words(r), ins)
		}
		seen[key(r)] = true
		pool = append(pool, r)
	}
	// Copies are made from base rows only, in a random order; a source whose
	// rewrite happens to equal another row is skipped.
	src := g.r.Perm(len(pool))
	for _, i := range src[:nExactDup] {
		pool = append(pool, pool[i])
	}
	made := 0
	for _, i := range src[nExactDup:] {
		if made == nNearDup {
			break
		}
		if c := g.nearCopy(pool[i]); ok(c) {
			seen[key(c)] = true
			pool = append(pool, c)
			made++
		}
	}
	if made < nNearDup {
		log.Fatalf("only %d near copies", made)
	}
	g.r.Shuffle(len(pool), func(i, j int) { pool[i], pool[j] = pool[j], pool[i] })
	for i := range pool {
		pool[i].ID = fmt.Sprintf("pool-%04d", i+1)
	}

	// The target rows come from their own stream and must not repeat any
	// pool row or pool output, so selection cannot win by exact matching.
	poolOut := map[string]bool{}
	for _, r := range pool {
		poolOut[r.Output] = true
	}
	tg := newGen(0x7a59_e7, 2)
	var target []row
	for try := 0; len(target) < nTarget; try++ {
		ins, in, out := tg.dispatch()
		r := row{Instruction: ins, Input: in, Output: out, Topic: targetName}
		if !ok(r) || poolOut[r.Output] {
			if try > 5000 {
				log.Fatal("target: ran out of fresh rows")
			}
			continue
		}
		seen[key(r)] = true
		r.ID = fmt.Sprintf("target-%02d", len(target)+1)
		target = append(target, r)
	}

	write("pool.jsonl", pool)
	write("target.jsonl", target)

	counts := map[string]int{}
	for _, r := range pool {
		counts[r.Topic]++
	}
	var ts []string
	for t := range counts {
		ts = append(ts, t)
	}
	sort.Strings(ts)
	for _, t := range ts {
		fmt.Printf("%-22s %d\n", t, counts[t])
	}
	fmt.Printf("pool %d rows, target %d rows\n", len(pool), len(target))
}

func write(name string, rows []row) {
	var buf bytes.Buffer
	enc := json.NewEncoder(&buf)
	enc.SetEscapeHTML(false) // keep the text plain: no \u003c for < or &
	for _, r := range rows {
		if err := enc.Encode(r); err != nil {
			log.Fatalf("encode %s: %v", r.ID, err)
		}
	}
	if err := os.WriteFile(name, buf.Bytes(), 0o644); err != nil {
		log.Fatal(err)
	}
	fmt.Printf("%s: %d bytes\n", name, buf.Len())
}
