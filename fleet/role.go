package fleet

import "time"

// Role is an API key's permission level; each includes the ones below it.
type Role string

const (
	RoleViewer     Role = "viewer"
	RolePilot      Role = "pilot"
	RoleTechnician Role = "technician"
	RoleAdmin      Role = "admin"
)

var roleRank = map[Role]int{RoleViewer: 1, RolePilot: 2, RoleTechnician: 3, RoleAdmin: 4}

// Valid reports whether r is a known role.
func (r Role) Valid() bool { return roleRank[r] > 0 }

// AtLeast reports whether r includes the permissions of min.
func (r Role) AtLeast(min Role) bool { return roleRank[r] >= roleRank[min] && roleRank[r] > 0 }

// Roles lists the roles from least to most privileged.
var Roles = []Role{RoleViewer, RolePilot, RoleTechnician, RoleAdmin}

// APIKey is a stored key; the token itself is never stored.
type APIKey struct {
	ID   string `json:"id"`
	Name string `json:"name"`
	// Person is who holds the key: a flight's pilot defaults to them.
	Person    string     `json:"person"`
	Role      Role       `json:"role"`
	CreatedAt time.Time  `json:"created_at"`
	RevokedAt *time.Time `json:"revoked_at"`
}
