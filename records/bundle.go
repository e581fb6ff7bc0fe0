// Package records writes and checks an airframe's records bundle: a zip of
// everything the register holds about the airframe (the record set that
// travels with an aircraft, 14 CFR 91.417 model), JSON for machines and CSV
// copies for spreadsheets, with a manifest of each file's SHA-256.
package records

import (
	"archive/zip"
	"context"
	"crypto/sha256"
	"encoding/csv"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"hash"
	"io"
	"strconv"
	"strings"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

// Format names the bundle layout; verify refuses others.
const Format = "rotorwright-records/1"

// ManifestName is the manifest's file name, written last.
const ManifestName = "manifest.json"

// Manifest lists every other file of the bundle with its size and SHA-256.
type Manifest struct {
	Format      string    `json:"format"`
	AirframeID  string    `json:"airframe_id"`
	Airframe    string    `json:"airframe"` // tail code
	GeneratedAt time.Time `json:"generated_at"`
	// AuditHead is the audit chain's head hash when the bundle was read; an
	// operator can check later that the chain still holds it
	// (`rotorwright audit verify --anchor`).
	AuditHead string `json:"audit_head"`
	Files     []File `json:"files"`
}

// File is one file of the bundle.
type File struct {
	Name   string `json:"name"`
	Bytes  int64  `json:"bytes"`
	SHA256 string `json:"sha256"`
}

// Options choose what goes in beyond the records.
type Options struct {
	Logs bool // the stored raw flight logs (gzip, as stored)
	// Notices and Compliance are the notices that apply to the airframe and
	// its parts and where each subject stands (computed by the programme).
	Notices    []*fleet.Notice
	Compliance []*fleet.Compliance
	Now        time.Time
}

// writer is the zip being written and the manifest it accumulates.
type writer struct {
	zw  *zip.Writer
	m   Manifest
	now time.Time
}

// file is one open zip entry that hashes and counts what it is given.
type file struct {
	w    *writer
	name string
	out  io.Writer
	h    hash.Hash
	n    int64
}

func (f *file) Write(p []byte) (int, error) {
	n, err := f.out.Write(p)
	f.h.Write(p[:n])
	f.n += int64(n)
	return n, err
}

func (f *file) close() {
	f.w.m.Files = append(f.w.m.Files, File{Name: f.name, Bytes: f.n, SHA256: hex.EncodeToString(f.h.Sum(nil))})
}

func (w *writer) create(name string, method uint16) (*file, error) {
	out, err := w.zw.CreateHeader(&zip.FileHeader{Name: name, Method: method, Modified: w.now})
	if err != nil {
		return nil, err
	}
	return &file{w: w, name: name, out: out, h: sha256.New()}, nil
}

// jsonArray streams a JSON array: open, one element per call, close.
type jsonArray struct {
	f     *file
	first bool
}

func (w *writer) array(name string) (*jsonArray, error) {
	f, err := w.create(name, zip.Deflate)
	if err != nil {
		return nil, err
	}
	_, err = io.WriteString(f, "[")
	return &jsonArray{f: f, first: true}, err
}

func (a *jsonArray) add(v any) error {
	b, err := json.Marshal(v)
	if err != nil {
		return err
	}
	sep := ",\n"
	if a.first {
		sep, a.first = "\n", false
	}
	if _, err := io.WriteString(a.f, sep); err != nil {
		return err
	}
	_, err = a.f.Write(b)
	return err
}

func (a *jsonArray) close() error {
	_, err := io.WriteString(a.f, "\n]\n")
	a.f.close()
	return err
}

// table is a CSV copy being written.
type table struct {
	f *file
	c *csv.Writer
}

func (w *writer) table(name string, header ...string) (*table, error) {
	f, err := w.create(name, zip.Deflate)
	if err != nil {
		return nil, err
	}
	t := &table{f: f, c: csv.NewWriter(f)}
	return t, t.c.Write(header)
}

// row writes a row, every cell neutralised against formula injection
// (fleet.SpreadsheetSafe). The bundle's numeric columns (hours, charge,
// energy, counts, ids) are never negative, so no number is quoted.
func (t *table) row(cells ...string) error {
	for i, c := range cells {
		cells[i] = fleet.SpreadsheetSafe(c)
	}
	return t.c.Write(cells)
}

func (t *table) close() error {
	t.c.Flush()
	t.f.close()
	return t.c.Error()
}

// Write streams the airframe's bundle as a zip to out, reading from one
// snapshot of the store. Each file is written as its rows arrive, so memory
// does not grow with the number of flights. A failure part way leaves a
// truncated zip, which verify refuses.
func Write(ctx context.Context, db *store.DB, airframeID string, o Options, out io.Writer) error {
	if o.Now.IsZero() {
		o.Now = time.Now()
	}
	w := &writer{zw: zip.NewWriter(out), now: o.Now.UTC()}
	err := db.ReadBundle(ctx, airframeID, func(b *store.Bundle) error {
		a, err := b.Airframe(ctx)
		if err != nil {
			return err
		}
		w.m = Manifest{Format: Format, AirframeID: a.ID, Airframe: a.Code, GeneratedAt: w.now, Files: []File{}}
		if w.m.AuditHead, err = b.AuditHead(ctx); err != nil {
			return err
		}
		steps := []func() error{
			func() error { return w.readme(a) },
			func() error { return w.one("airframe.json", a) },
			func() error { return w.parts(ctx, b) },
			func() error { return w.flights(ctx, b) },
			func() error { return w.workRecords(ctx, b) },
			func() error { return w.events(ctx, b) },
			func() error { return w.discrepancies(ctx, b) },
			func() error { return w.notices(o) },
			func() error { return w.audit(ctx, b) },
		}
		if o.Logs {
			steps = append(steps, func() error { return w.logs(ctx, b) })
		}
		for _, step := range steps {
			if err := step(); err != nil {
				return err
			}
		}
		return nil
	})
	if err != nil {
		return err
	}
	f, err := w.zw.CreateHeader(&zip.FileHeader{Name: ManifestName, Method: zip.Deflate, Modified: w.now})
	if err != nil {
		return err
	}
	enc := json.NewEncoder(f)
	enc.SetIndent("", "  ")
	if err := enc.Encode(w.m); err != nil {
		return err
	}
	return w.zw.Close()
}

func (w *writer) one(name string, v any) error {
	f, err := w.create(name, zip.Deflate)
	if err != nil {
		return err
	}
	enc := json.NewEncoder(f)
	enc.SetIndent("", "  ")
	err = enc.Encode(v)
	f.close()
	return err
}

func (w *writer) readme(a *fleet.Airframe) error {
	f, err := w.create("README.txt", zip.Deflate)
	if err != nil {
		return err
	}
	_, err = fmt.Fprintf(f, `Maintenance records of airframe %s (%s, model %q), written %s.

airframe.json       the airframe
parts.json          every part ever fitted, with all its fits and software history
flights.json        every flight with its packs and the figures computed from its log
work_records.json   maintenance work (14 CFR 43.9 model) with sign-off and discrepancies found
events.json         events on the airframe, its flights and its parts
discrepancies.json  discrepancies found by work records, open or cleared
notices.json        the notices that apply and where each subject stands
audit.json          the audit-log rows of all of these, with their hash chain links
csv/                spreadsheet copies
logs/               the raw flight logs as uploaded (gzip), when asked for
manifest.json       every file's size and SHA-256; check with: rotorwright records verify FILE

Decision support only: airworthiness decisions stay with the operator's maintenance
personnel, the manufacturer's instructions and local aviation rules.
`, a.Code, a.ID, a.Model, w.now.Format(time.RFC3339))
	f.close()
	return err
}

func ts(t time.Time) string { return t.UTC().Format(time.RFC3339) }

func tsp(t *time.Time) string {
	if t == nil {
		return ""
	}
	return ts(*t)
}

func sp(s *string) string {
	if s == nil {
		return ""
	}
	return *s
}

func fp(f *float64) string {
	if f == nil {
		return ""
	}
	return strconv.FormatFloat(*f, 'f', -1, 64)
}

func (w *writer) parts(ctx context.Context, b *store.Bundle) error {
	arr, err := w.array("parts.json")
	if err != nil {
		return err
	}
	if err := b.Parts(ctx, func(p *store.BundlePart) error { return arr.add(p) }); err != nil {
		return err
	}
	if err := arr.close(); err != nil {
		return err
	}
	// A zip is written one entry at a time: each CSV copy is its own pass.
	t, err := w.table("csv/parts.csv", "id", "kind", "serial", "part_number", "lot", "maker", "status", "software_version")
	if err != nil {
		return err
	}
	if err := b.Parts(ctx, func(p *store.BundlePart) error {
		return t.row(p.ID, string(p.Kind), p.Serial, p.PartNumber, p.Lot, p.Maker, p.Status, sp(p.SoftwareVersion))
	}); err != nil {
		return err
	}
	if err := t.close(); err != nil {
		return err
	}
	t, err = w.table("csv/fits.csv", "fit_id", "part_id", "serial", "airframe_id", "kind", "position", "fitted_at",
		"removed_at", "removal_reason")
	if err != nil {
		return err
	}
	if err := b.Parts(ctx, func(p *store.BundlePart) error {
		for _, f := range p.Fits {
			if err := t.row(f.ID, f.PartID, p.Serial, f.AirframeID, string(f.Kind), f.Position, ts(f.FittedAt),
				tsp(f.RemovedAt), sp(f.RemovalReason)); err != nil {
				return err
			}
		}
		return nil
	}); err != nil {
		return err
	}
	return t.close()
}

func (w *writer) flights(ctx context.Context, b *store.Bundle) error {
	arr, err := w.array("flights.json")
	if err != nil {
		return err
	}
	if err := b.Flights(ctx, func(f *store.BundleFlight) error { return arr.add(f) }); err != nil {
		return err
	}
	if err := arr.close(); err != nil {
		return err
	}
	t, err := w.table("csv/flights.csv", "flight_id", "takeoff_at", "landing_at", "hours", "pilot", "job_id", "source",
		"packs", "software", "override_reason", "charge_mah", "energy_wh", "log_sha256")
	if err != nil {
		return err
	}
	if err := b.Flights(ctx, func(f *store.BundleFlight) error {
		var packs []string
		for _, p := range f.Packs {
			packs = append(packs, p.Serial)
		}
		var m struct {
			ChargeMah *float64 `json:"charge_mah"`
			EnergyWh  *float64 `json:"energy_wh"`
		}
		_ = json.Unmarshal(f.Metrics, &m) // null for a flight without a log
		return t.row(f.ID, ts(f.TakeoffAt), ts(f.LandingAt), strconv.FormatFloat(f.LandingAt.Sub(f.TakeoffAt).Hours(), 'f', 4, 64),
			f.Pilot, sp(f.JobID), f.Source, strings.Join(packs, " "), sp(f.Software), sp(f.OverrideReason),
			fp(m.ChargeMah), fp(m.EnergyWh), sp(f.LogSHA256))
	}); err != nil {
		return err
	}
	return t.close()
}

func (w *writer) workRecords(ctx context.Context, b *store.Bundle) error {
	arr, err := w.array("work_records.json")
	if err != nil {
		return err
	}
	if err := b.WorkRecords(ctx, func(r *fleet.WorkRecord) error { return arr.add(r) }); err != nil {
		return err
	}
	if err := arr.close(); err != nil {
		return err
	}
	t, err := w.table("csv/work_records.csv", "id", "at", "action", "work", "airframe_id", "part_id", "rule_id", "notice_id",
		"performed_by", "approved_by", "certificate_number", "certificate_kind", "return_to_service", "software_from",
		"software_to", "removed_part_id", "fitted_part_id", "corrects_id", "airframe_hours")
	if err != nil {
		return err
	}
	if err := b.WorkRecords(ctx, func(r *fleet.WorkRecord) error {
		return t.row(r.ID, ts(r.At), r.Action, r.Work, sp(r.AirframeID), sp(r.PartID), sp(r.RuleID), sp(r.NoticeID),
			r.PerformedBy, sp(r.ApprovedBy), sp(r.CertificateNumber), sp(r.CertificateKind), sp(r.ReturnToService),
			sp(r.SoftwareFrom), sp(r.SoftwareTo), sp(r.RemovedPartID), sp(r.FittedPartID), sp(r.CorrectsID), fp(r.AirframeHours))
	}); err != nil {
		return err
	}
	return t.close()
}

func (w *writer) events(ctx context.Context, b *store.Bundle) error {
	arr, err := w.array("events.json")
	if err != nil {
		return err
	}
	if err := b.Events(ctx, func(e *fleet.Event) error { return arr.add(e) }); err != nil {
		return err
	}
	if err := arr.close(); err != nil {
		return err
	}
	t, err := w.table("csv/events.csv", "id", "at", "kind", "severity", "airframe_id", "part_id", "flight_id", "detail",
		"resolved_at", "resolution", "resolved_by")
	if err != nil {
		return err
	}
	if err := b.Events(ctx, func(e *fleet.Event) error {
		return t.row(e.ID, ts(e.At), e.Kind, e.Severity, sp(e.AirframeID), sp(e.PartID), sp(e.FlightID), e.Detail,
			tsp(e.ResolvedAt), sp(e.Resolution), sp(e.ResolvedBy))
	}); err != nil {
		return err
	}
	return t.close()
}

func (w *writer) discrepancies(ctx context.Context, b *store.Bundle) error {
	arr, err := w.array("discrepancies.json")
	if err != nil {
		return err
	}
	if err := b.Discrepancies(ctx, func(d *fleet.Discrepancy) error { return arr.add(d) }); err != nil {
		return err
	}
	if err := arr.close(); err != nil {
		return err
	}
	t, err := w.table("csv/discrepancies.csv", "id", "found_at", "description", "grounding", "airframe_id", "part_id",
		"work_record_id", "cleared_at", "cleared_by")
	if err != nil {
		return err
	}
	if err := b.Discrepancies(ctx, func(d *fleet.Discrepancy) error {
		return t.row(d.ID, ts(d.FoundAt), d.Description, strconv.FormatBool(d.Grounding), sp(d.AirframeID), sp(d.PartID),
			d.WorkRecordID, tsp(d.ClearedAt), sp(d.ClearedBy))
	}); err != nil {
		return err
	}
	return t.close()
}

func (w *writer) notices(o Options) error {
	notices, compliance := o.Notices, o.Compliance
	if notices == nil {
		notices = []*fleet.Notice{}
	}
	if compliance == nil {
		compliance = []*fleet.Compliance{}
	}
	if err := w.one("notices.json", map[string]any{"notices": notices, "compliance": compliance}); err != nil {
		return err
	}
	t, err := w.table("csv/compliance.csv", "notice_id", "reference", "category", "subject_kind", "subject", "status",
		"applicable_since", "complied_at", "work_record_id", "due_status", "due_at", "not_applicable_reason", "decided_by")
	if err != nil {
		return err
	}
	for _, c := range compliance {
		if err := t.row(c.NoticeID, c.Reference, c.Category, c.SubjectKind, c.Subject, c.Status, tsp(c.ApplicableSince),
			tsp(c.CompliedAt), sp(c.WorkRecordID), sp(c.DueStatus), tsp(c.DueAt), sp(c.Reason), sp(c.DecidedBy)); err != nil {
			return err
		}
	}
	return t.close()
}

func (w *writer) audit(ctx context.Context, b *store.Bundle) error {
	arr, err := w.array("audit.json")
	if err != nil {
		return err
	}
	if err := b.Audit(ctx, func(e *store.AuditEntry) error { return arr.add(e) }); err != nil {
		return err
	}
	if err := arr.close(); err != nil {
		return err
	}
	t, err := w.table("csv/audit.csv", "id", "at", "actor_name", "method", "route", "entity", "entity_id", "prev_hash", "hash")
	if err != nil {
		return err
	}
	if err := b.Audit(ctx, func(e *store.AuditEntry) error {
		return t.row(strconv.FormatInt(e.ID, 10), ts(e.At), e.ActorName, e.Method, e.Route, e.Entity, e.EntityID, e.PrevHash, e.Hash)
	}); err != nil {
		return err
	}
	return t.close()
}

// logs adds each stored log as it was stored (gzip, so the zip keeps it as is).
func (w *writer) logs(ctx context.Context, b *store.Bundle) error {
	return b.Logs(ctx, func(id string, at time.Time, gz []byte) error {
		f, err := w.create("logs/"+at.UTC().Format("20060102T150405Z")+"_"+id+".csv.gz", zip.Store)
		if err != nil {
			return err
		}
		_, err = f.Write(gz)
		f.close()
		return err
	})
}
