package api

import (
	"net/http"
	"time"

	"github.com/gin-gonic/gin"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

// noticeWritable are the members a technician may set on a notice.
var noticeWritable = []string{"reference", "title", "issued_on", "revision", "category", "required_work",
	"applicability", "window"}

func (s *Server) createNotice(c *gin.Context) {
	n := fleet.Notice{Revision: "1"}
	if err := s.decodeWritable(c, &n, noticeWritable...); err != nil {
		s.fail(c, err)
		return
	}
	out, err := s.db.CreateNotice(c.Request.Context(), &n)
	if err != nil {
		s.fail(c, err)
		return
	}
	s.recomputeFleet(c.Request.Context()) // applicability changed
	c.Header("Location", "/v1/notices/"+out.ID)
	writeOne(c, http.StatusCreated, out.Version, out)
}

func (s *Server) listNotices(c *gin.Context) {
	p, err := pageOf(c)
	if err != nil {
		s.fail(c, err)
		return
	}
	f := store.NoticeFilter{Category: c.Query("category")}
	switch f.Category {
	case "", fleet.NoticeMandatory, fleet.NoticeAdvisory:
	default:
		s.fail(c, fleet.FieldError("category", "must be mandatory or advisory"))
		return
	}
	active, err := queryBool(c, "active")
	if err != nil {
		s.fail(c, err)
		return
	}
	f.Active = active != nil && *active
	list, next, err := s.db.Notices(c.Request.Context(), f, p)
	if err != nil {
		s.fail(c, err)
		return
	}
	writeList(c, list, next)
}

func (s *Server) getNotice(c *gin.Context) { getOne(s, c, "notice", s.db.Notice) }

// patchNotice changes a notice (a new revision, corrected applicability or
// window); compliance is recomputed at once.
func (s *Server) patchNotice(c *gin.Context) {
	id, version, body, ok := s.patchInput(c, "notice")
	if !ok {
		return
	}
	n, err := s.db.UpdateNotice(c.Request.Context(), id, version, func(n *fleet.Notice) error {
		return applyMergePatch(body, n, noticeWritable...)
	})
	if err != nil {
		s.fail(c, err)
		return
	}
	s.recomputeFleet(c.Request.Context())
	writeOne(c, http.StatusOK, n.Version, n)
}

// withdrawNotice marks a notice withdrawn; its records stay.
func (s *Server) withdrawNotice(c *gin.Context) {
	id, err := pathID(c, "notice")
	if err != nil {
		s.fail(c, err)
		return
	}
	version, err := ifMatch(c)
	if err != nil {
		s.fail(c, err)
		return
	}
	if err := s.db.WithdrawNotice(c.Request.Context(), id, version); err != nil {
		s.fail(c, err)
		return
	}
	c.Status(http.StatusNoContent)
}

// noticeCompliance lists every subject the notice applies to (or that a
// record or decision names) with its status, now or as of ?at=.
func (s *Server) noticeCompliance(c *gin.Context) {
	id, err := pathID(c, "notice")
	if err != nil {
		s.fail(c, err)
		return
	}
	at, err := queryTime(c, "at")
	if err != nil {
		s.fail(c, err)
		return
	}
	n, err := s.db.Notice(c.Request.Context(), id)
	if err != nil {
		s.fail(c, err)
		return
	}
	sc := store.NoticeScope{At: time.Now().UTC()}
	if at != nil {
		sc.At = at.UTC()
	}
	list := []*fleet.Compliance{}
	if n.WithdrawnAt == nil {
		cs, err := s.prog.Compliance(c.Request.Context(), sc, id)
		if err != nil {
			s.fail(c, err)
			return
		}
		list = append(list, cs...)
	}
	writeList(c, list, "")
}

type decisionInput struct {
	SubjectKind string `json:"subject_kind"`
	SubjectID   string `json:"subject_id"`
	Reason      string `json:"reason"`
}

// decideNotApplicable records that the notice does not apply to a subject.
func (s *Server) decideNotApplicable(c *gin.Context) {
	id, err := pathID(c, "notice")
	if err != nil {
		s.fail(c, err)
		return
	}
	var in decisionInput
	if err := s.decodeJSON(c, &in); err != nil {
		s.fail(c, err)
		return
	}
	subject, err := store.ParseID("subject_id", in.SubjectID)
	if err != nil {
		s.fail(c, err)
		return
	}
	d, err := s.db.DecideNotApplicable(c.Request.Context(), &store.NoticeDecision{NoticeID: id, SubjectKind: in.SubjectKind,
		SubjectID: subject, Reason: in.Reason})
	if err != nil {
		s.fail(c, err)
		return
	}
	s.recomputeFleet(c.Request.Context())
	c.JSON(http.StatusCreated, d)
}

// withdrawDecision removes a not-applicable decision.
func (s *Server) withdrawDecision(c *gin.Context) {
	id, err := pathID(c, "notice")
	if err != nil {
		s.fail(c, err)
		return
	}
	subject, err := store.ParseID("subject_id", c.Param("subject_id"))
	if err != nil {
		s.fail(c, fleet.Errorf(fleet.ENOTFOUND, "decision not found"))
		return
	}
	if err := s.db.WithdrawDecision(c.Request.Context(), id, subject); err != nil {
		s.fail(c, err)
		return
	}
	s.recomputeFleet(c.Request.Context())
	c.Status(http.StatusNoContent)
}
