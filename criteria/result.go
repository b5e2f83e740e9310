package criteria

import (
	"encoding/json"
	"math"
)

// Criterion names, in the fixed order of Result.Votes. They are stable JSON keys.
const (
	NameElbow                = "elbow"
	NameSilhouette           = "silhouette"
	NameSimplifiedSilhouette = "simplified_silhouette"
	NameGapBox               = "gap_box"
	NameGapPCA               = "gap_pca"
	NameBICGMM               = "bic_gmm"
	NameAICGMM               = "aic_gmm"
	NameBICKMeans            = "bic_kmeans"
	NameICLGMM               = "icl_gmm"
	NameWard                 = "ward"
	NameCalinskiHarabasz     = "calinski_harabasz"
	NameDaviesBouldin        = "davies_bouldin"
	NameSplitAgreement       = "split_agreement"
	NameClusterModes         = "cluster_modes"
)

// CriterionNames returns the criterion names in the order of Result.Votes.
func CriterionNames() []string {
	return []string{NameElbow, NameSilhouette, NameSimplifiedSilhouette, NameGapBox, NameGapPCA, NameBICGMM,
		NameAICGMM, NameBICKMeans, NameICLGMM, NameWard, NameCalinskiHarabasz, NameDaviesBouldin, NameSplitAgreement,
		NameClusterModes}
}

// Result is the outcome of Evaluate.
type Result struct {
	PerK    []Scores  `json:"per_k"` // one per k in MinK..MaxK
	Votes   []Vote    `json:"votes"` // one per criterion, in CriterionNames order
	Verdict Verdict   `json:"verdict"`
	Ward    Ward      `json:"ward"`
	Fits    []Fit     `json:"-"`       // the chosen coreset fit per k, parallel to PerK
	Options Options   `json:"options"` // the options used, defaults filled in
	Modes   ModeCheck `json:"one_mode_check"`
	Far     FarRows   `json:"far_rows"` // rows far from every centre of the verdict's fit
	// MixturesStopAt is the largest k whose mixture was kept when the mixtures stopped before
	// max-k because BIC and ICL had settled (mixturesSettled: risen at each of four k in a row, or
	// stayed above their lowest value for six k, or a third of its k, with one family); 0
	// otherwise. The mixture scores above it are NaN.
	MixturesStopAt int `json:"mixtures_stopped_at_k,omitempty"`
}

// Vote is one criterion's choice of k. Abstain is true (and K 0) when the criterion could not
// decide; Note says why or how. A criterion whose best value lies at the top of a range of at
// least three k has found no optimum inside it: it abstains with StillImproving set (K 0), and
// Decide counts it only as evidence that the best k may be larger than max-k.
type Vote struct {
	Criterion      string `json:"criterion"`
	K              int    `json:"k"`
	Abstain        bool   `json:"abstain,omitempty"`
	StillImproving bool   `json:"still_improving_at_max_k,omitempty"`
	Note           string `json:"note,omitempty"`
}

// Verdict is the combined choice of k, made by Decide: a weighted two-stage vote (one group or
// several; then which k) with weights measured on the benchmark grid (criteria/weights.json).
// Agreement is the plain share of non-abstaining criteria that named K; RunnerUp is the k >= 2 with
// the next most vote weight (0 if none). If no criterion names any k >= 2, K is max(MinK, 1) with
// Structure false.
type Verdict struct {
	K         int      `json:"k"`
	RunnerUp  int      `json:"runner_up"` // 0 = none
	Agreement float64  `json:"agreement"` // share of voting (non-abstaining) criteria that named K
	Agree     []string `json:"agree"`
	Disagree  []string `json:"disagree"`
	Structure bool     `json:"structure"` // false when K = 1, "no cluster structure"
	AtMaxK    bool     `json:"at_max_k"`  // most criteria still improve at MaxK: the best k may be larger
	Rule      string   `json:"rule"`

	// Support is the share of the deciding stage's vote weight (Weights) behind K; Confidence is
	// Support mapped through the calibration table measured on the benchmark grid (the share of
	// grid runs with that support whose verdict was right).
	Support    float64 `json:"support"`
	Confidence float64 `json:"confidence"`
	// Unstable is true when another k holds nearly as much vote weight as K (at least
	// unstableRatio of it); Alternatives then lists those k, strongest first.
	Unstable     bool  `json:"unstable"`
	Alternatives []int `json:"alternatives"`
	// Why says in one sentence each what decided K and, if any, the runner-up.
	Why       string `json:"why"`
	WhyRunner string `json:"why_runner_up,omitempty"`
}

// Scores holds every criterion's value at one k; NaN where undefined (marshalled as JSON null).
type Scores struct {
	K     int  `json:"k"`
	Valid bool `json:"valid"` // false when the coreset fit has an empty cluster or zero WCSS (k too large)

	WCSS    float64 `json:"wcss"`    // coreset weighted k-means cost, an estimate of the full-data WCSS
	Kneedle float64 `json:"kneedle"` // Kneedle difference curve (1 - y_n) - x_n

	Silhouette           float64 `json:"silhouette"` // stratified anchor estimate
	SilhouetteLo         float64 `json:"silhouette_lo"`
	SilhouetteHi         float64 `json:"silhouette_hi"`
	SimplifiedSilhouette float64 `json:"simplified_silhouette"`

	GapBox  float64 `json:"gap_box"`
	GapBoxS float64 `json:"gap_box_s"` // s_k = sd_k sqrt(1 + 1/B)
	GapPCA  float64 `json:"gap_pca"`
	GapPCAS float64 `json:"gap_pca_s"`
	LogW    float64 `json:"log_w"` // data-side ln W_k at the gap sample size

	LogLikGMM float64 `json:"loglik_gmm"` // scaled to N rows, less the coreset fit's optimism (fitExcess)
	BICGMM    float64 `json:"bic_gmm"`
	AICGMM    float64 `json:"aic_gmm"`    // AICc: AIC with the small-sample correction (criteria.AICc)
	BICKMeans float64 `json:"bic_kmeans"` // -2 l + p ln N, lower is better
	// ICLGMM is the integrated completed likelihood of the full-covariance mixture (Biernacki,
	// Celeux & Govaert 2000): BICGMM + 2 EN, EN the entropy of the mixture's soft classification
	// of the rows (scaled to N rows). Lower is better; it adds to BIC the price of clusters that
	// overlap, so a cluster that is not bell-shaped is not paid for as several.
	ICLGMM float64 `json:"icl_gmm"`
	// MixtureFamily is the covariance model behind LogLikGMM, BICGMM, AICGMM and ICLGMM: full,
	// or, where the points are few for a full one at max-k (mixtureLadder), the family of lower
	// BIC at this k. Empty when no mixture was fitted.
	MixtureFamily MixtureFamily `json:"mixture_family,omitempty"`
	// BICStudentT is the BIC of one multivariate Student t group (StudentTFit, scaled and corrected
	// as LogLikGMM is), at k = 1 only (NaN elsewhere): bic_gmm's k >= 2 gives way to one group
	// when this is lower (a heavy-tailed cloud, not several groups).
	BICStudentT float64 `json:"bic_student_t"`

	WardHeight float64 `json:"ward_height"` // cost of the Ward merge from k to k-1 clusters
	WardJump   float64 `json:"ward_jump"`   // (H(k) - H(k+1)) / H(k+1)

	CalinskiHarabasz float64 `json:"calinski_harabasz"`
	DaviesBouldin    float64 `json:"davies_bouldin"`

	SplitAgreement float64 `json:"split_agreement"` // prediction strength between two disjoint halves
	// SplitAgreementPlain is the prediction strength of the same halves in the rows' own scale
	// (not whitened): it picks split_agreement's k once the whitened halves say "several".
	SplitAgreementPlain float64 `json:"split_agreement_plain"`
	// ClusterModes is ClusterModes' Bonferroni-corrected p-value for the k-means partition at k:
	// small when some cluster still holds two modes along its own 2-means cut.
	ClusterModes float64 `json:"cluster_modes"`
	// ClusterModesCover is the share of ClusterModes' points in clusters large enough to test.
	ClusterModesCover float64 `json:"cluster_modes_cover"`
}

func nanScores(k int) Scores {
	n := math.NaN()
	return Scores{K: k, WCSS: n, Kneedle: n, Silhouette: n, SilhouetteLo: n, SilhouetteHi: n,
		SimplifiedSilhouette: n, GapBox: n, GapBoxS: n, GapPCA: n, GapPCAS: n, LogW: n, LogLikGMM: n,
		BICGMM: n, AICGMM: n, BICKMeans: n, ICLGMM: n, BICStudentT: n, WardHeight: n, WardJump: n, CalinskiHarabasz: n, DaviesBouldin: n,
		SplitAgreement: n, SplitAgreementPlain: n, ClusterModes: n, ClusterModesCover: n}
}

// UnmarshalJSON reads s as MarshalJSON writes it: null becomes NaN.
func (s *Scores) UnmarshalJSON(b []byte) error {
	type plain Scores // the same fields and tags, without this method
	p := plain(nanScores(0))
	if err := json.Unmarshal(b, &p); err != nil {
		return err
	}
	*s = Scores(p)
	return nil
}

// jsonFloat marshals NaN and ±Inf as null.
type jsonFloat float64

func (f jsonFloat) MarshalJSON() ([]byte, error) {
	v := float64(f)
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return []byte("null"), nil
	}
	return json.Marshal(v)
}

// MarshalJSON writes s with NaN (and infinite) values as null.
func (s Scores) MarshalJSON() ([]byte, error) {
	type out struct {
		K                    int           `json:"k"`
		Valid                bool          `json:"valid"`
		WCSS                 jsonFloat     `json:"wcss"`
		Kneedle              jsonFloat     `json:"kneedle"`
		Silhouette           jsonFloat     `json:"silhouette"`
		SilhouetteLo         jsonFloat     `json:"silhouette_lo"`
		SilhouetteHi         jsonFloat     `json:"silhouette_hi"`
		SimplifiedSilhouette jsonFloat     `json:"simplified_silhouette"`
		GapBox               jsonFloat     `json:"gap_box"`
		GapBoxS              jsonFloat     `json:"gap_box_s"`
		GapPCA               jsonFloat     `json:"gap_pca"`
		GapPCAS              jsonFloat     `json:"gap_pca_s"`
		LogW                 jsonFloat     `json:"log_w"`
		LogLikGMM            jsonFloat     `json:"loglik_gmm"`
		BICGMM               jsonFloat     `json:"bic_gmm"`
		AICGMM               jsonFloat     `json:"aic_gmm"`
		BICKMeans            jsonFloat     `json:"bic_kmeans"`
		ICLGMM               jsonFloat     `json:"icl_gmm"`
		MixtureFamily        MixtureFamily `json:"mixture_family,omitempty"`
		BICStudentT          jsonFloat     `json:"bic_student_t"`
		WardHeight           jsonFloat     `json:"ward_height"`
		WardJump             jsonFloat     `json:"ward_jump"`
		CalinskiHarabasz     jsonFloat     `json:"calinski_harabasz"`
		DaviesBouldin        jsonFloat     `json:"davies_bouldin"`
		SplitAgreement       jsonFloat     `json:"split_agreement"`
		SplitAgreementPlain  jsonFloat     `json:"split_agreement_plain"`
		ClusterModes         jsonFloat     `json:"cluster_modes"`
		ClusterModesCover    jsonFloat     `json:"cluster_modes_cover"`
	}
	return json.Marshal(out{s.K, s.Valid, jsonFloat(s.WCSS), jsonFloat(s.Kneedle), jsonFloat(s.Silhouette),
		jsonFloat(s.SilhouetteLo), jsonFloat(s.SilhouetteHi), jsonFloat(s.SimplifiedSilhouette),
		jsonFloat(s.GapBox), jsonFloat(s.GapBoxS), jsonFloat(s.GapPCA), jsonFloat(s.GapPCAS), jsonFloat(s.LogW),
		jsonFloat(s.LogLikGMM), jsonFloat(s.BICGMM), jsonFloat(s.AICGMM), jsonFloat(s.BICKMeans),
		jsonFloat(s.ICLGMM), s.MixtureFamily, jsonFloat(s.BICStudentT), jsonFloat(s.WardHeight), jsonFloat(s.WardJump), jsonFloat(s.CalinskiHarabasz), jsonFloat(s.DaviesBouldin),
		jsonFloat(s.SplitAgreement), jsonFloat(s.SplitAgreementPlain), jsonFloat(s.ClusterModes),
		jsonFloat(s.ClusterModesCover)})
}
