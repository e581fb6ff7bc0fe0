package api

import (
	"net/http"
	"time"

	"github.com/gin-gonic/gin"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/records"
	"github.com/rotorwright/rotorwright/store"
)

// airframeRecords streams the airframe's records bundle as a zip (with the
// raw logs when ?logs=true). The answer is streamed from one database
// snapshot as it is read; a failure part way aborts the connection, leaving
// a truncated zip that `rotorwright records verify` refuses.
//
// The snapshot holds a pool connection for as long as the client takes to
// read the zip (up to the write timeout), so at most half the pool's
// connections are held so (Server.exports): a script fetching every
// airframe's bundle at once would otherwise leave the rest of the API
// waiting for a connection.
func (s *Server) airframeRecords(c *gin.Context) {
	id, err := pathID(c, "airframe")
	if err != nil {
		s.fail(c, err)
		return
	}
	select {
	case s.exports <- struct{}{}:
		defer func() { <-s.exports }()
	default:
		s.fail(c, &fleet.Error{Code: fleet.EUNAVAILABLE, RetryAfter: 30 * time.Second,
			Message: "the server is writing as many records bundles as it takes at once; retry shortly"})
		return
	}
	var o records.Options
	logs, err := queryBool(c, "logs")
	if err != nil {
		s.fail(c, err)
		return
	}
	o.Logs = logs != nil && *logs
	ctx := c.Request.Context()
	a, err := s.db.Airframe(ctx, id)
	if err != nil {
		s.fail(c, err)
		return
	}
	o.Now = time.Now().UTC()
	if o.Compliance, err = s.prog.Compliance(ctx, store.NoticeScope{AirframeID: id, At: o.Now}); err != nil {
		s.fail(c, err)
		return
	}
	seen := map[string]bool{}
	for _, cp := range o.Compliance {
		if !seen[cp.NoticeID] {
			seen[cp.NoticeID] = true
			n, err := s.db.Notice(ctx, cp.NoticeID)
			if err != nil {
				s.fail(c, err)
				return
			}
			o.Notices = append(o.Notices, n)
		}
	}
	c.Header("Content-Type", "application/zip")
	c.Header("Content-Disposition", `attachment; filename="`+a.Code+`-records-`+o.Now.Format("20060102")+`.zip"`)
	c.Status(http.StatusOK)
	if err := records.Write(ctx, s.db, id, o, c.Writer); err != nil {
		s.log.Error("records bundle", "airframe", id, "err", err, "request_id", c.GetString(ctxRequestID))
		panic(http.ErrAbortHandler)
	}
}
