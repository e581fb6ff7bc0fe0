package sim

import "time"

// Scenario is an invented fleet with months of flights and planted stories,
// as plain data for the caller to write into the database. Times are UTC.
// Flight logs are not generated here: call Generate(f.Spec, w) per flight.
type Scenario struct {
	Seed        uint64
	Start, End  time.Time // End is "now" for the stories
	Models      []Model
	Airframes   []Airframe
	Parts       []Part // motors, propellers, ESCs, avionics, packs, spares
	Fits        []Fit
	Jobs        []Job
	Pilots      []string
	Flights     []Flight // chronological
	Events      []Event  // events people record (ingest detects the rest)
	WorkRecords []WorkRecord
	PackChecks  []PackCheck
	Stories     Stories
}

// Model is an airframe model of the demo firm (invented).
type Model struct {
	Name            string
	Layout          string // quad-x, hex-x, octo-x
	Rotors          int
	RotorDiameterMM float64
	EmptyMassG      float64 // ready to fly without packs
	MTOWG           float64
	CellsS          int
	PacksPerFlight  int
	MotorPN, PropPN string
	EscPN, PackPN   string
	VibrationLevel  float64 // m/s^2 at hover
}

// Airframe is one tail of the fleet.
type Airframe struct {
	Code, Name, Model string
	Layout            string
	Positions         []Position
	CellsS            int
	PacksPerFlight    int
	EmptyMassG        float64
	MTOWG             float64
	RotorDiameterMM   float64
	Notes             string
	// MotorBias is each position's thrust-share offset used in its flights.
	MotorBias []float64
}

// Part kinds and statuses use the design's names.
const (
	KindMotor            = "motor"
	KindPropeller        = "propeller"
	KindPack             = "pack"
	KindESC              = "esc"
	KindFlightController = "flight_controller"
	KindCamera           = "camera"
	KindGimbal           = "gimbal"
)

// Part is one serialised part. Exactly one of Motor, Propeller, Pack is set
// for those kinds; Status is the status at Scenario.End.
type Part struct {
	Kind, Serial, PartNumber, Lot, Maker string
	AcquiredOn                           time.Time
	MassG                                float64
	Status                               string // stock, fitted, quarantine, retired
	Motor                                *MotorSpec
	Propeller                            *PropellerSpec
	Pack                                 *PackSpec
}

// MotorSpec mirrors the motor specs of the design (invented demo values).
type MotorSpec struct {
	KV                    float64
	Rotation              string
	BearingCount          int
	BearingDynamicRatingN float64
	BearingLifeFactor     float64
}

// PropellerSpec mirrors the propeller specs of the design.
type PropellerSpec struct {
	DiameterIn, PitchIn float64
	Blades              int
	Rotation            string
}

// PackSpec mirrors the pack specs of the design.
type PackSpec struct {
	Chemistry      string
	CellsS, CellsP int
	RatedMah       float64
	CRating        float64
	BaselineIRmOhm float64
}

// Fit is a part at a position over [From, To); a zero To means still fitted.
// Avionics sit at the positions "fc", "camera" and "gimbal".
type Fit struct {
	Serial, Airframe, Position string
	From, To                   time.Time
}

// Site is a job's place.
type Site struct {
	Name          string
	Lat, Lon      float64
	ElevationM    float64
	MeanTempC     float64
	PatternHeight float64
}

// Job is a client engagement.
type Job struct {
	Code, Client     string
	Site             Site
	StartsOn, EndsOn time.Time // dates (midnight UTC), inclusive
	Notes            string
}

// Flight is one simulated flight; Spec generates its log.
type Flight struct {
	Airframe, Job, Pilot string
	Packs                []string
	TakeoffAt, LandingAt time.Time
	TakeoffMassG         float64
	Spec                 FlightSpec
}

// Event is an event a person records (the hard landing is left for the
// ingest to detect from the log).
type Event struct {
	Kind       string
	At         time.Time
	Airframe   string
	PartSerial string
	Flight     int // index into Flights, -1 for none
	Severity   string
	Detail     string
}

// WorkRecord is maintenance work; a replacement names both parts.
type WorkRecord struct {
	At                          time.Time
	Airframe, Position          string
	Action, PerformedBy, Notes  string
	RemovedSerial, FittedSerial string
}

// PackCheck is a pack charge, storage or capacity-test record.
type PackCheck struct {
	Serial     string
	At         time.Time
	Kind       string // charge, storage, capacity_test
	MahIn      float64
	RestV      float64
	CellV      []float64
	CellIRmOhm []float64
}

// Stories names the planted stories so tests and the demo can find them.
type Stories struct {
	HardDutyAirframe, HardDutyMotor string // motor that works harder than its mates
	ClimbingPack                    string // resistance grows fast
	PropStrikeFlight                int    // index into Flights
	PropStrikeEvent                 int    // index into Events
	HardLandingFlight               int    // landing_g HardLandingG, awaiting inspection
	HardLandingG                    float64
	StoragePack                     string // charged to full, then idle 7+ days
	StorageCheck                    int    // index into PackChecks
	TraceLot                        string // one motor lot across airframes and jobs
	TraceAirframes                  []string
	SwapAirframe, SwapPosition      string
	SwapRemoved, SwapFitted         string
	SwapAt                          time.Time
	SwapRecord                      int // index into WorkRecords
}
