package web

import (
	"context"

	"coeval/store"
	"coeval/web/analysis"
)

// What the handlers need of the database, declared on the consumer side: one small interface per group
// of handlers, so a handler that takes one can be tested with a small fake where the database is not the
// point (TestSummaryDownloadWithAFakeStore). Store, what NewHandler takes and the Server holds (the one
// *store.DB in the app), is their union.
type Store interface {
	homeReader
	calibrationLister
	provinceReader
	summaryStore
	dateReader
	sectionReader
	accountStore
	recordEditor
	changeStore
	mappingStore
	pulseStore
	comparisonStore
	versionReader
}

// versionReader is what kept results are found by without reading records: the versions of what they
// read, kept by the database (store.DataVersions).
type versionReader interface {
	DataVersions(ctx context.Context) (store.DataVersions, error)
	ProvinceVersion(ctx context.Context, id int64) (int64, error)
}

// summaryStore is what the unit summaries and the timeline read: a province's or a unit's dates as one
// snapshot, and the calibrations.
type summaryStore interface {
	analysis.ProvinceSource
	analysis.UnitSource
	calibrationLister
}

// homeReader is what the home page reads: the counts and the latest changes.
type homeReader interface {
	Counts(ctx context.Context) (store.Counts, error)
	LatestBatches(ctx context.Context, limit int) ([]store.Batch, error)
}

// calibrationLister lists the calibrations ⁴⁰Ar/³⁹Ar dates are recalculated to (every page with a
// calibration choice).
type calibrationLister interface {
	Calibrations(ctx context.Context) ([]store.Calibration, error)
}

// provinceReader is what the province and unit pages and lists read.
type provinceReader interface {
	Provinces(ctx context.Context) ([]store.Province, error)
	Province(ctx context.Context, id int64) (store.Province, error)
	Units(ctx context.Context, provinceID int64) ([]store.Unit, error)
	Unit(ctx context.Context, id int64) (store.Unit, error)
}

// dateReader is what the date list, the date pages and the date downloads read.
type dateReader interface {
	Dates(ctx context.Context, f store.DateFilter) ([]store.Date, int, error)
	Date(ctx context.Context, id int64) (store.Date, error)
	DatesPage(ctx context.Context, f store.DateFilter) (store.DatePage, error)
	EachDate(ctx context.Context, f store.DateFilter, fn func(store.Date) error) error
	Materials(ctx context.Context) ([]string, error)
	DateFilterChoices(ctx context.Context, provinceID int64) (store.DateFilterChoices, error)
	RevisionCount(ctx context.Context, recordType string, id int64) (int, error)
	// DateCountsByProvince: which provinces an event's answer compares (web/eventanswer.go).
	DateCountsByProvince(ctx context.Context, minAgeMa, maxAgeMa float64, state store.ReviewState) (map[int64]int, error)
}

// sectionReader is what the section pages, their models and the comparison's sections read.
type sectionReader interface {
	analysis.SnapshotReader
	Sections(ctx context.Context) ([]store.Section, error)
	Section(ctx context.Context, id int64) (store.Section, error)
	Samples(ctx context.Context, sectionID int64) ([]store.Sample, []string, error)
	Proxies(ctx context.Context) ([]store.Proxy, error)
	TiePoints(ctx context.Context, sectionID int64) ([]store.TiePoint, error)
	Events(ctx context.Context, sectionID int64) ([]store.Event, error)
	Hiatuses(ctx context.Context, sectionID int64) ([]store.Hiatus, error)
	AnomalyDecisions(ctx context.Context, sectionID int64) ([]store.AnomalyDecision, error)
}

// accountStore is what sign-in, sessions, accounts, tokens, settings and backups use.
type accountStore interface {
	Setting(ctx context.Context, key string) (string, error)
	SetSetting(ctx context.Context, key, value string) error
	Authenticate(ctx context.Context, name, password string) (store.User, error)
	UserByID(ctx context.Context, id int64) (store.User, error)
	UserByToken(ctx context.Context, token string) (store.User, error)
	sessionRows
	ReadOnly() bool
	CreateUser(ctx context.Context, name, role, password string) (store.User, error)
	SetTargetCalibration(ctx context.Context, code, source string) error
	Users(ctx context.Context) ([]store.User, error)
	UpdateAccount(ctx context.Context, id int64, c store.AccountChange) (store.User, error)
	CreateToken(ctx context.Context, userID int64, name string) (string, error)
	RevokeToken(ctx context.Context, userID, tokenID int64) error
	Tokens(ctx context.Context, userID int64) ([]store.Token, error)
	Backup(ctx context.Context, path string) error
}

// recordEditor is what the forms that create, edit, review, delete and restore records use, with the
// records' history.
type recordEditor interface {
	CreateDate(ctx context.Context, f store.Form, asCurator bool) (store.Date, error)
	UpdateDate(ctx context.Context, id int64, version int, f store.Form, asCurator bool) (store.Date, error)
	Review(ctx context.Context, recordType string, id int64, version int, accept bool, note string) error
	DeleteDate(ctx context.Context, id int64, version int) error
	Revisions(ctx context.Context, recordType string, id int64) ([]store.Revision, error)
	RevisionByID(ctx context.Context, id int64) (store.Revision, error)
	RevertRevision(ctx context.Context, revID int64) error
	CreateUnit(ctx context.Context, f store.Form) (store.Unit, error)
	UpdateUnit(ctx context.Context, id int64, version int, f store.Form) (store.Unit, error)
	DeleteUnit(ctx context.Context, id int64, version int) error
	CreateSection(ctx context.Context, f store.Form) (store.Section, error)
	UpdateSection(ctx context.Context, id int64, version int, f store.Form) (store.Section, error)
	DeleteSection(ctx context.Context, id int64, version int) error
	Event(ctx context.Context, id int64) (store.Event, error)
	CreateEvent(ctx context.Context, sectionID int64, f store.Form, asCurator bool) (store.Event, error)
	UpdateEvent(ctx context.Context, id int64, version int, f store.Form, asCurator bool) (store.Event, error)
	DeleteEvent(ctx context.Context, id int64, version int) error
	TiePoint(ctx context.Context, id int64) (store.TiePoint, error)
	CreateTie(ctx context.Context, sectionID int64, f store.Form, asCurator bool) (store.TiePoint, error)
	UpdateTie(ctx context.Context, id int64, version int, f store.Form, asCurator bool) (store.TiePoint, error)
	DeleteTie(ctx context.Context, id int64, version int) error
	Hiatus(ctx context.Context, id int64) (store.Hiatus, error)
	CreateHiatus(ctx context.Context, sectionID int64, f store.Form, asCurator bool) (store.Hiatus, error)
	UpdateHiatus(ctx context.Context, id int64, version int, f store.Form, asCurator bool) (store.Hiatus, error)
	DeleteHiatus(ctx context.Context, id int64, version int) error
	CreateProvince(ctx context.Context, f store.Form) (store.Province, error)
	UpdateProvince(ctx context.Context, id int64, version int, f store.Form) (store.Province, error)
	DeleteProvince(ctx context.Context, id int64, version int) error
	RecordAuthor(ctx context.Context, recordType string, id int64) (int64, error)
	AddSectionEvent(ctx context.Context, sectionID int64, f store.EventForm, asCurator bool) (store.Event, error)
	AnomalyToEvent(ctx context.Context, k store.AnomalyKey, name, notes string) (store.Event, store.AnomalyDecision, error)
	RejectAnomaly(ctx context.Context, k store.AnomalyKey, reason string) (store.AnomalyDecision, error)
}

// changeStore is what uploads and whole changes use: preview, commit, accept, undo, the changes feed.
type changeStore interface {
	BatchRevisions(ctx context.Context, batchID int64) ([]store.Revision, error)
	BatchRevisionsAfter(ctx context.Context, batchID, after int64, limit int) ([]store.Revision, error)
	BatchByID(ctx context.Context, id int64) (store.BatchRow, error)
	SaveUpload(ctx context.Context, u store.Upload) (int64, error)
	UploadByID(ctx context.Context, id int64) (store.Upload, error)
	PreviewUpload(ctx context.Context, u store.Upload) (store.Preview, error)
	CommitUpload(ctx context.Context, u store.Upload) (store.ImportResult, error)
	UndoBatch(ctx context.Context, batchID int64) (int, error)
	AcceptBatch(ctx context.Context, batchID int64) (int, []string, error)
	PendingInBatch(ctx context.Context, batchID int64) (int, error)
	Batches(ctx context.Context, f store.BatchFilter) ([]store.BatchRow, int, error)
}

// mappingStore is what the mapping step of an upload and the change's page use: the saved mappings of
// the columns of tables as papers publish them, and the mapping an import read its file through.
type mappingStore interface {
	Mappings(ctx context.Context) ([]store.Mapping, error)
	MappingByName(ctx context.Context, name string) (store.Mapping, error)
	MappingsForFile(ctx context.Context, fileName string, body []byte) ([]store.Mapping, error)
	SaveMapping(ctx context.Context, m store.Mapping) error
	MappingCreator(ctx context.Context, name string) (int64, bool, error)
	SetUploadMapping(ctx context.Context, id int64, m store.Mapping) error
	BatchMapping(ctx context.Context, batchID int64) (*store.Mapping, error)
}

// pulseStore keeps the pulses saved from the timeline.
type pulseStore interface {
	SavePulses(ctx context.Context, provinceID int64, source string, ps []store.Pulse) ([]store.Pulse, error)
	Pulses(ctx context.Context, provinceID int64) ([]store.Pulse, error)
}

// comparisonStore is what the comparison uses: the data stamp and the saved comparisons.
type comparisonStore interface {
	DataStamp(ctx context.Context) (int64, error)
	SaveComparison(ctx context.Context, c store.Comparison) (int64, error)
	Comparisons(ctx context.Context) ([]store.Comparison, error)
	Comparison(ctx context.Context, id int64) (store.Comparison, error)
}
