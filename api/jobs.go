package api

import (
	"net/http"
	"strconv"
	"strings"
	"time"

	"github.com/gin-gonic/gin"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

// jobWritable are the members a client may set on a job.
var jobWritable = []string{"code", "client", "site", "starts_on", "ends_on", "notes"}

func (s *Server) createJob(c *gin.Context) {
	var in fleet.Job
	if err := s.decodeWritable(c, &in, jobWritable...); err != nil {
		s.fail(c, err)
		return
	}
	j, err := s.db.CreateJob(c.Request.Context(), &in)
	if err != nil {
		s.fail(c, err)
		return
	}
	c.Header("Location", "/v1/jobs/"+j.ID)
	writeOne(c, http.StatusCreated, j.Version, j)
}

func (s *Server) listJobs(c *gin.Context) {
	p, err := pageOf(c)
	if err != nil {
		s.fail(c, err)
		return
	}
	list, next, err := s.db.Jobs(c.Request.Context(), store.JobFilter{Client: c.Query("client"), Code: c.Query("code")}, p)
	if err != nil {
		s.fail(c, err)
		return
	}
	writeList(c, list, next)
}

func (s *Server) getJob(c *gin.Context) { getOne(s, c, "job", s.db.Job) }

func (s *Server) patchJob(c *gin.Context) {
	id, version, body, ok := s.patchInput(c, "job")
	if !ok {
		return
	}
	j, err := s.db.UpdateJob(c.Request.Context(), id, version, func(j *fleet.Job) error {
		return applyMergePatch(body, j, jobWritable...)
	})
	if err != nil {
		s.fail(c, err)
		return
	}
	writeOne(c, http.StatusOK, j.Version, j)
}

// jobManifest answers "which parts flew on this job", as JSON or, with
// ?format=csv, one spreadsheet row per flight and part (packs included).
func (s *Server) jobManifest(c *gin.Context) {
	id, err := pathID(c, "job")
	if err != nil {
		s.fail(c, err)
		return
	}
	format := c.DefaultQuery("format", "json")
	if format != "json" && format != "csv" {
		s.fail(c, fleet.FieldError("format", "must be json or csv"))
		return
	}
	m, err := s.db.Manifest(c.Request.Context(), id)
	if err != nil {
		s.fail(c, err)
		return
	}
	if format == "json" {
		c.JSON(http.StatusOK, m)
		return
	}
	s.writeManifestCSV(c, m)
}

// writeManifestCSV answers with the manifest as CSV: one spreadsheet row per
// flight and part (packs included). The API and the board share it.
func (s *Server) writeManifestCSV(c *gin.Context, m *store.Manifest) {
	c.Header("Content-Type", "text/csv; charset=utf-8")
	c.Header("Content-Disposition", `attachment; filename="manifest-`+m.Job.Code+`.csv"`)
	c.Status(http.StatusOK)
	w := newCSV(c.Writer)
	_ = w.row(text("job"), text("flight_id"), text("airframe"), text("pilot"), text("takeoff_at"), text("landing_at"),
		text("hours"), text("ready_at_takeoff"), text("takeoff_blockers"), text("kind"), text("position"),
		text("serial"), text("part_number"), text("lot"))
	for _, f := range m.Flights {
		// ready_at_takeoff: yes, no (flown not ready: the blockers' codes
		// follow) or empty while not judged.
		ready, blockers := "", []string{}
		if rd := f.ReadinessAtTakeoff; rd != nil {
			ready = map[bool]string{true: "yes", false: "no"}[rd.Ready]
			for _, b := range rd.Blockers {
				blockers = append(blockers, b.Code)
			}
		}
		head := []cell{text(m.Job.Code), text(f.FlightID), text(f.AirframeCode), text(f.Pilot),
			text(f.TakeoffAt.UTC().Format(time.RFC3339)), text(f.LandingAt.UTC().Format(time.RFC3339)), num(f.Hours, 4),
			text(ready), text(strings.Join(blockers, " "))}
		for _, p := range f.Parts {
			_ = w.row(append(head[:len(head):len(head)], text(string(p.Kind)), text(p.Position), text(p.Serial),
				text(p.PartNumber), text(p.Lot))...)
		}
		for _, p := range f.Packs {
			_ = w.row(append(head[:len(head):len(head)], text("pack"), text("slot "+strconv.Itoa(p.Slot)), text(p.Serial),
				text(p.PartNumber), text(p.Lot))...)
		}
		if len(f.Parts)+len(f.Packs) == 0 {
			// A flight with no part on record still has its row.
			_ = w.row(append(head[:len(head):len(head)], text(""), text(""), text(""), text(""), text(""))...)
		}
	}
	if err := w.flush(); err != nil {
		s.log.Info("manifest CSV not fully written", "err", err)
	}
}
