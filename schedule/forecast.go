package schedule

import (
	"context"
	"math"
	"sort"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

// PartDemand is the expected replacements of one part number over a horizon
// against the parts of that number in stock.
type PartDemand struct {
	PartNumber string   `json:"part_number"`
	Kind       string   `json:"kind"`
	Expected   int      `json:"expected"`
	InStock    int      `json:"in_stock"`
	Shortfall  int      `json:"shortfall"`
	Subjects   []string `json:"subjects"` // serials expected to be replaced first
}

// Forecast is the spares demand over the next Days days.
type Forecast struct {
	Days        int          `json:"days"`
	From        time.Time    `json:"from"`
	PartNumbers []PartDemand `json:"part_numbers"`
}

// PartsForecast counts, per part number, the replacements the due list
// forecasts within the horizon (replace and retire rules on parts): one for
// each item overdue or forecast inside it, plus repeats of usage limits that
// will come round again at the subject's trailing rate. Parts without a part
// number cannot be ordered and are left out.
func (p *Programme) PartsForecast(ctx context.Context, days int) (*Forecast, error) {
	now := p.Now().UTC()
	end := now.Add(time.Duration(days) * 24 * time.Hour)
	items, err := p.DB.DueItems(ctx, store.DueFilter{})
	if err != nil {
		return nil, err
	}
	rules, err := p.DB.Rules(ctx)
	if err != nil {
		return nil, err
	}
	kindOf := map[string]string{}
	for _, r := range rules {
		kindOf[r.ID] = r.AppliesTo
	}
	byPN := map[string]*PartDemand{}
	for _, it := range items {
		if it.RuleID == nil || it.SubjectKind != "part" || it.PartNumber == nil || (it.Action != "replace" && it.Action != "retire") {
			continue
		}
		if it.Status != fleet.DueOverdue && (it.ForecastDate == nil || it.ForecastDate.After(end)) {
			continue
		}
		d := byPN[*it.PartNumber]
		if d == nil {
			d = &PartDemand{PartNumber: *it.PartNumber, Kind: kindOf[*it.RuleID], Subjects: []string{}}
			byPN[*it.PartNumber] = d
		}
		d.Expected += 1 + repeats(it, now, end)
		d.Subjects = append(d.Subjects, it.Subject)
	}
	stock, err := p.DB.StockByPartNumber(ctx)
	if err != nil {
		return nil, err
	}
	f := &Forecast{Days: days, From: now, PartNumbers: []PartDemand{}}
	for pn, d := range byPN {
		d.InStock = stock[pn]
		d.Shortfall = max(0, d.Expected-d.InStock)
		f.PartNumbers = append(f.PartNumbers, *d)
	}
	sort.Slice(f.PartNumbers, func(i, j int) bool {
		a, b := f.PartNumbers[i], f.PartNumbers[j]
		if a.Shortfall != b.Shortfall {
			return a.Shortfall > b.Shortfall
		}
		return a.PartNumber < b.PartNumber
	})
	return f, nil
}

// maxRepeats bounds the repeats of one item within the horizon: a part
// replaced a million times in a horizon of at most two years says the rate
// is wrong; the count saturates there rather than overflow.
const maxRepeats = 1_000_000

// repeats counts how many more times a usage limit comes round before end
// after the first replacement, at the limit's trailing rate.
func repeats(it *fleet.DueItem, now, end time.Time) int {
	best := 0.0
	for _, u := range it.Usage {
		if u.Forecast == nil || u.RatePerDay == nil || !(*u.RatePerDay > 0) || u.Remaining <= 0 ||
			u.Limit == "soh_below_pct" || u.Limit == "ir_rise_pct" {
			continue
		}
		first := math.Max(0, u.Forecast.Sub(now).Hours()/24)
		left := end.Sub(now).Hours()/24 - first
		// A fresh part lasts Max / rate days: floor(left / (Max / rate)).
		if n := math.Floor(left * *u.RatePerDay / u.Max); n > best {
			best = n
		}
	}
	return int(math.Min(best, maxRepeats))
}
