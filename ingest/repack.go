package ingest

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"

	"github.com/rotorwright/rotorwright/store"
)

// RepackResult counts one repack run.
type RepackResult struct {
	Logs          int   // logs rewritten
	Before, After int64 // their stored bytes before and after
	Failed        int   // logs left as they were (each error is in the run's error)
}

// Repack rewrites up to limit logs packed fast at upload at repackLevel
// (see compress.go), one transaction a log. Before a log is replaced, its
// stored bytes and the new ones must both give back the text recorded at
// upload (its SHA-256 and length); a log that does not is left as it was
// and reported, since a stored log that no longer matches its digest is a
// fault in the records for people to look at, not something to repack.
func Repack(ctx context.Context, db *store.DB, limit int) (RepackResult, error) {
	var res RepackResult
	ids, err := db.LogsToRepack(ctx, limit)
	if err != nil {
		return res, err
	}
	var errs []error
	for _, id := range ids {
		if err := ctx.Err(); err != nil {
			errs = append(errs, err)
			break
		}
		before, after, err := db.RepackLog(ctx, id, repackOne)
		switch {
		case errors.Is(err, store.ErrNotWaiting):
		case err != nil:
			res.Failed++
			errs = append(errs, fmt.Errorf("flight %s: %w", id, err))
		default:
			res.Logs++
			res.Before += int64(before)
			res.After += int64(after)
		}
	}
	return res, errors.Join(errs...)
}

// repackOne is the new stored bytes of l, checked to give back its text.
func repackOne(l store.PackedLog) ([]byte, error) {
	text, err := Decompress(l.Gz)
	if err != nil {
		return nil, fmt.Errorf("the stored log does not decompress: %w", err)
	}
	if err := sameText(text, l); err != nil {
		return nil, fmt.Errorf("the stored log %w", err)
	}
	out, err := gzipWith(&repackWriters, text, nil)
	if err != nil {
		return nil, err
	}
	back, err := Decompress(out)
	if err != nil {
		return nil, fmt.Errorf("the repacked log does not decompress: %w", err)
	}
	if err := sameText(back, l); err != nil {
		return nil, fmt.Errorf("the repacked log %w", err)
	}
	return out, nil
}

func sameText(text []byte, l store.PackedLog) error {
	sum := sha256.Sum256(text)
	if got := hex.EncodeToString(sum[:]); got != l.SHA256 || int64(len(text)) != l.Bytes {
		return fmt.Errorf("gives %d bytes of SHA-256 %s, not the %d bytes of %s recorded at upload", len(text), got, l.Bytes, l.SHA256)
	}
	return nil
}
