package schedule

import (
	"context"
	"errors"
	"fmt"
	"net"
	"net/http"
	"net/netip"
	"net/url"
	"strings"
	"syscall"
	"time"
)

// Resolver looks up a host's addresses; *net.Resolver satisfies it, tests
// pass a fake.
type Resolver interface {
	LookupIPAddr(ctx context.Context, host string) ([]net.IPAddr, error)
}

// Policy says which destinations a webhook may reach. The zero value is the
// strict one for production: public addresses only.
type Policy struct {
	// AllowLoopback permits 127.0.0.0/8 and ::1 (tests with local receivers).
	AllowLoopback bool
	// AllowPrivate permits the private ranges (10/8, 172.16/12, 192.168/16,
	// fc00::/7, and the shared 100.64/10), for receivers on a company network.
	AllowPrivate bool
	// Resolver resolves host names; nil means net.DefaultResolver.
	Resolver Resolver
}

// URLError is a refused webhook URL or destination, with the reason.
type URLError struct {
	URL    string // redacted of any password
	Reason string
}

// Error names the URL and the reason.
func (e *URLError) Error() string { return fmt.Sprintf("webhook URL %q refused: %s", e.URL, e.Reason) }

// ValidateWebhookURL checks raw with the system resolver: http or https, a
// host, no user info, and every address the host resolves to allowed by
// Policy{AllowPrivate: allowPrivate} (loopback always refused).
func ValidateWebhookURL(raw string, allowPrivate bool) error {
	ctx, cancel := context.WithTimeout(context.Background(), 5*time.Second)
	defer cancel()
	return Policy{AllowPrivate: allowPrivate}.ValidateURL(ctx, raw)
}

// ValidateURL checks raw against the policy, resolving its host.
func (p Policy) ValidateURL(ctx context.Context, raw string) error {
	u, err := url.Parse(raw)
	if err != nil {
		return &URLError{URL: raw, Reason: "not a URL: " + err.Error()}
	}
	shown := u.Redacted()
	refuse := func(format string, args ...any) error {
		return &URLError{URL: shown, Reason: fmt.Sprintf(format, args...)}
	}
	if u.Scheme != "http" && u.Scheme != "https" {
		return refuse("scheme %q is not http or https", u.Scheme)
	}
	if u.User != nil {
		// Credentials in a URL end up in logs; receivers should use a header
		// or a secret path instead.
		return refuse("user info is not allowed in a webhook URL")
	}
	host := u.Hostname()
	if host == "" {
		return refuse("no host")
	}
	if u.Port() != "" {
		if _, err := net.LookupPort("tcp", u.Port()); err != nil {
			return refuse("bad port %q", u.Port())
		}
	}
	if strings.Contains(host, "%") {
		return refuse("IPv6 zone identifiers are not allowed")
	}
	if ip, err := netip.ParseAddr(host); err == nil {
		if reason := p.refusal(ip); reason != "" {
			return refuse("address %s is %s", ip, reason)
		}
		return nil
	}
	if numericHost(host) {
		// A top-level label is never all-numeric (RFC 3696 section 2), so a
		// name like 2130706433 or 0x7f.1 can only be an odd spelling of an
		// IPv4 address that some resolvers expand.
		return refuse("host %q looks like a numeric address not in dotted-quad form", host)
	}
	res := p.Resolver
	if res == nil {
		res = net.DefaultResolver
	}
	addrs, err := res.LookupIPAddr(ctx, host)
	if err != nil {
		return refuse("cannot resolve host %q: %v", host, err)
	}
	if len(addrs) == 0 {
		return refuse("host %q has no addresses", host)
	}
	for _, a := range addrs {
		ip, ok := netip.AddrFromSlice(a.IP)
		if !ok {
			return refuse("host %q resolved to a malformed address", host)
		}
		if reason := p.refusal(ip); reason != "" {
			return refuse("host %q resolves to %s, %s", host, ip.Unmap(), reason)
		}
	}
	return nil
}

// numericHost reports whether the last label of host is all digits or a
// 0x-prefixed hex number.
func numericHost(host string) bool {
	labels := strings.Split(strings.TrimSuffix(host, "."), ".")
	last := strings.ToLower(labels[len(labels)-1])
	if last == "" {
		return false
	}
	digits := strings.TrimPrefix(last, "0x")
	hex := digits != last
	for _, r := range digits {
		isDigit := r >= '0' && r <= '9'
		if !isDigit && !(hex && r >= 'a' && r <= 'f') {
			return false
		}
	}
	return true
}

// Ranges the netip predicates do not cover.
var (
	thisNetwork  = netip.MustParsePrefix("0.0.0.0/8")     // RFC 791 / RFC 1122 "this network"
	sharedCGN    = netip.MustParsePrefix("100.64.0.0/10") // RFC 6598 carrier-grade NAT
	broadcast    = netip.MustParseAddr("255.255.255.255")
	nat64        = netip.MustParsePrefix("64:ff9b::/96") // RFC 6052: embeds an IPv4 address
	metadataAddr = netip.MustParseAddr("169.254.169.254")
)

// refusal returns why ip is not an allowed destination, or "".
func (p Policy) refusal(ip netip.Addr) string {
	ip = ip.Unmap() // ::ffff:127.0.0.1 is 127.0.0.1
	if ip.Zone() != "" {
		return "a zoned address"
	}
	if nat64.Contains(ip) {
		b := ip.As16()
		return p.refusal(netip.AddrFrom4([4]byte{b[12], b[13], b[14], b[15]}))
	}
	switch {
	case ip.IsUnspecified() || thisNetwork.Contains(ip):
		return "unspecified"
	case ip.IsLoopback():
		if p.AllowLoopback {
			return ""
		}
		return "loopback"
	case ip == metadataAddr:
		return "link-local (the cloud metadata address)"
	case ip.IsLinkLocalUnicast():
		return "link-local"
	case ip.IsMulticast() || ip == broadcast:
		return "multicast or broadcast"
	case ip.IsPrivate() || sharedCGN.Contains(ip):
		if p.AllowPrivate {
			return ""
		}
		return "private (set the allow-private switch to permit it)"
	}
	return ""
}

// CheckDial is a net.Dialer Control function: it refuses a connection to an
// address the policy does not allow. It runs after name resolution, on the
// address actually dialled, so a host that resolved to a public address at
// validation and to an internal one later (DNS rebinding) is still refused.
func (p Policy) CheckDial(network, address string, _ syscall.RawConn) error {
	ap, err := netip.ParseAddrPort(address)
	if err != nil {
		return fmt.Errorf("dial %s: cannot check address: %w", address, err)
	}
	if reason := p.refusal(ap.Addr()); reason != "" {
		return fmt.Errorf("dial %s refused: %s address", address, reason)
	}
	return nil
}

// DialContext returns a dial function that applies CheckDial to every
// connection attempt.
func (p Policy) DialContext(d *net.Dialer) func(ctx context.Context, network, addr string) (net.Conn, error) {
	dd := *d
	dd.Control = p.CheckDial
	return dd.DialContext
}

// errRedirect refuses redirects: a webhook that answers 3xx has not taken the
// delivery, and following it would let a receiver steer us elsewhere.
var errRedirect = errors.New("webhook redirects are not followed")

// NewClient returns an HTTP client for webhook delivery: the given overall
// timeout, dial-time address checks under p, no proxy from the environment
// (a proxy would hide the real destination) and no redirects.
func NewClient(p Policy, timeout time.Duration) *http.Client {
	tr := &http.Transport{
		DialContext:           p.DialContext(&net.Dialer{Timeout: 5 * time.Second}),
		TLSHandshakeTimeout:   5 * time.Second,
		ResponseHeaderTimeout: timeout,
		MaxIdleConns:          10,
		IdleConnTimeout:       60 * time.Second,
	}
	return &http.Client{
		Transport: tr,
		Timeout:   timeout,
		CheckRedirect: func(*http.Request, []*http.Request) error {
			return errRedirect
		},
	}
}
