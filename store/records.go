package store

// The records of the compilation. Uncertainties are 1σ; SigmaLevel keeps the level a value was published
// at, so exports and displays can give it back as published. Optional values are pointers (nil = none).

// Province is a magmatic province.
type Province struct {
	ID          int64  `json:"id"`
	Name        string `json:"name"`
	Description string `json:"description"`
	// A palaeomagnetic pole of the province (north pole convention, degrees; longitude -180..180), its A95
	// (degrees, the radius of its 95 % confidence circle) and its source: all four or none.
	PoleLatitude  *float64 `json:"pole_latitude"`
	PoleLongitude *float64 `json:"pole_longitude"`
	PoleA95       *float64 `json:"pole_a95"`
	PoleSource    string   `json:"pole_source"`
	Version       int      `json:"version"`
	CreatedAt     string   `json:"created_at"`
	UpdatedAt     string   `json:"updated_at"`
	NUnits        int      `json:"n_units"`
	NDates        int      `json:"n_dates"`
}

// HasPole reports whether the province carries a palaeomagnetic pole.
func (p Province) HasPole() bool {
	return p.PoleLatitude != nil && p.PoleLongitude != nil && p.PoleA95 != nil
}

// Unit is a mappable eruptive or intrusive unit of a province.
type Unit struct {
	ID             int64    `json:"id"`
	ProvinceID     int64    `json:"province_id"`
	Province       string   `json:"province"`
	Name           string   `json:"name"`
	Kind           string   `json:"kind"`
	PilePosition   *int     `json:"pile_position"`
	VolumeKm3      *float64 `json:"volume_km3"`
	VolumeSigmaKm3 *float64 `json:"volume_sigma_km3_1s"`
	Latitude       *float64 `json:"latitude"`
	Longitude      *float64 `json:"longitude"`
	Notes          string   `json:"notes"`
	Version        int      `json:"version"`
	CreatedAt      string   `json:"created_at"`
	UpdatedAt      string   `json:"updated_at"`
	NDates         int      `json:"n_dates"`
}

// Date is one published or measured age, of a unit or of a horizon of a section.
type Date struct {
	ID             int64       `json:"id"`
	UnitID         *int64      `json:"unit_id"`
	Unit           string      `json:"unit"`
	ProvinceID     *int64      `json:"province_id"`
	Province       string      `json:"province"`
	SectionID      *int64      `json:"section_id"`
	Section        string      `json:"section"`
	HeightM        *float64    `json:"height_m"`
	SampleCode     string      `json:"sample_code"`
	Method         string      `json:"method"`
	Material       string      `json:"material"`
	Interpretation string      `json:"interpretation"`
	AgeMa          float64     `json:"age_ma"`
	SigmaMa        float64     `json:"sigma_ma_1s"`   // analytical (U–Pb X)
	SigmaYMa       *float64    `json:"sigma_y_ma_1s"` // X ⊕ tracer
	SigmaZMa       *float64    `json:"sigma_z_ma_1s"` // full external
	SigmaLevel     int         `json:"sigma_level_published"`
	Tracer         string      `json:"tracer"`
	Monitor        string      `json:"monitor"`
	MonitorAgeMa   *float64    `json:"monitor_age_ma"`
	LambdaPerA     *float64    `json:"lambda_per_a"`
	Laboratory     string      `json:"laboratory"`
	Citation       string      `json:"citation"`
	DOI            string      `json:"doi"`
	Latitude       *float64    `json:"latitude"`
	Longitude      *float64    `json:"longitude"`
	ReviewState    ReviewState `json:"review_state"`
	ReviewNote     string      `json:"review_note"`
	Notes          string      `json:"notes"`
	Version        int         `json:"version"`
	CreatedAt      string      `json:"created_at"`
	UpdatedAt      string      `json:"updated_at"`
}

// Calibration is a named set of ⁴⁰K decay constant and fluence-monitor age, with its source.
type Calibration struct {
	ID              int64    `json:"id"`
	Code            string   `json:"code"`
	Name            string   `json:"name"`
	LambdaPerA      float64  `json:"lambda_per_a"`
	LambdaSigmaPerA *float64 `json:"lambda_sigma_per_a_1s"`
	Monitor         string   `json:"monitor"`
	MonitorAgeMa    float64  `json:"monitor_age_ma"`
	MonitorSigmaMa  *float64 `json:"monitor_sigma_ma_1s"`
	// LambdaMonitorCorrelation is the correlation of λ and the monitor age (0 for independent sources).
	LambdaMonitorCorrelation float64 `json:"lambda_monitor_correlation"`
	Source                   string  `json:"source"`
	IsTarget                 bool    `json:"is_target"`
}

// Section is an outcrop or core.
type Section struct {
	ID                int64    `json:"id"`
	Name              string   `json:"name"`
	Kind              string   `json:"kind"`
	Latitude          *float64 `json:"latitude"`
	Longitude         *float64 `json:"longitude"`
	Palaeolatitude    *float64 `json:"palaeolatitude"`
	ThermalMaturity   string   `json:"thermal_maturity"`
	TocThresholdWtPct float64  `json:"toc_threshold_wt_pct"`
	Notes             string   `json:"notes"`
	Version           int      `json:"version"`
	CreatedAt         string   `json:"created_at"`
	UpdatedAt         string   `json:"updated_at"`
	NSamples          int      `json:"n_samples"`
	NTies             int      `json:"n_ties"`
	NEvents           int      `json:"n_events"`
	MinHeightM        *float64 `json:"min_height_m"`
	MaxHeightM        *float64 `json:"max_height_m"`
}

// Proxy is a measurable quantity of a sample with its one canonical unit.
type Proxy struct {
	Code        string `json:"code"`
	Name        string `json:"name"`
	Unit        string `json:"unit"`
	Description string `json:"description"`
}

// Measurement is one proxy value of one sample of a section (long form). Value is nil when below detection.
type Measurement struct {
	SectionID      int64    `json:"section_id"`
	Sample         string   `json:"sample"`
	HeightM        float64  `json:"height_m"`
	Proxy          string   `json:"proxy"`
	Value          *float64 `json:"value"`
	Sigma          *float64 `json:"sigma_1s"`
	BelowDetection bool     `json:"below_detection"`
	DetectionLimit *float64 `json:"detection_limit"`
	Method         string   `json:"method"`
}

// Sample is one sample of a section with its proxy values keyed by proxy code (wide form).
type Sample struct {
	Sample  string                 `json:"sample"`
	HeightM float64                `json:"height_m"`
	Values  map[string]Measurement `json:"values"`
}

// TiePoint is a dated horizon of a section. Like dates and events it is reviewed: a contributor's tie is
// pending until a curator accepts it.
type TiePoint struct {
	ID             int64       `json:"id"`
	SectionID      int64       `json:"section_id"`
	Section        string      `json:"section"`
	Label          string      `json:"label"`
	HeightM        float64     `json:"height_m"`
	Kind           string      `json:"kind"`
	Distribution   string      `json:"distribution"`
	AgeMa          *float64    `json:"age_ma"`
	SigmaMa        *float64    `json:"sigma_ma_1s"`
	SigmaLevel     *int        `json:"sigma_level_published"`
	AgeMinMa       *float64    `json:"age_min_ma"`
	AgeMaxMa       *float64    `json:"age_max_ma"`
	DateID         *int64      `json:"date_id"`
	DateSampleCode string      `json:"date_sample_code"`
	DateMethod     string      `json:"date_method"`
	ReviewState    ReviewState `json:"review_state"` // pending, accepted, rejected: age models use accepted ties by default
	ReviewNote     string      `json:"review_note"`
	Notes          string      `json:"notes"`
	Version        int         `json:"version"`
	CreatedAt      string      `json:"created_at"`
	UpdatedAt      string      `json:"updated_at"`
}

// Event is something in the sedimentary record: a horizon or interval of a section.
type Event struct {
	ID          int64       `json:"id"`
	SectionID   *int64      `json:"section_id"`
	Section     string      `json:"section"`
	Name        string      `json:"name"`
	Kind        string      `json:"kind"`
	BaseHeightM *float64    `json:"base_height_m"`
	TopHeightM  *float64    `json:"top_height_m"`
	AgeMa       *float64    `json:"age_ma"`
	SigmaMa     *float64    `json:"sigma_ma_1s"`
	DateID      *int64      `json:"date_id"`
	GroupID     *int64      `json:"group_id"`
	Origin      string      `json:"origin"`
	ReviewState ReviewState `json:"review_state"`
	ReviewNote  string      `json:"review_note"`
	Notes       string      `json:"notes"`
	Version     int         `json:"version"`
	CreatedAt   string      `json:"created_at"`
	UpdatedAt   string      `json:"updated_at"`
}

// Batch is a set of changes made together (one import, one edit).
type Batch struct {
	ID      int64  `json:"id"`
	Kind    string `json:"kind"`
	Source  string `json:"source"`
	At      string `json:"at"`
	Summary string `json:"summary"`
}
