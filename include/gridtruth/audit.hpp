// gridtruth — the per-feature audit: ellipsoidal truth, grid measures and the error budget.
//
// Definitions (see DEVELOPERS.md "The error budget"), for a source CRS S (geographic, or the base geographic CRS
// of a projected source) and a target projected CRS P, with edges meaning what EdgeSpec says (geodesics by
// default):
//   R  reference: the measure on S's ellipsoid of the feature with its true edges, lifted to ellipsoidal height h
//   E_S the same on S's ellipsoid (no height)
//   E_P the same on P's ellipsoid, of the vertices (and edges) after the datum transformation S → P's base CRS
//   D  densified grid measure: the vertices joined by the projected images of the true edges
//   G  grid measure: the projected vertices joined by straight lines in P's plane
// and every part is signed ("+" means the grid overstates):
//   from_edges = G − D, from_scale = D − E_P, from_datum = E_P − E_S, from_height = E_S − R,
// so that error = G − R = from_edges + from_scale + from_datum + from_height exactly (as computed).
#pragma once

#include <cstddef>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "gridtruth/crs.hpp"
#include "gridtruth/geometry.hpp"
#include "gridtruth/tolerance.hpp"

namespace gridtruth {

/// How an auditor is set up. Units are in the member names.
/// What the line between two consecutive vertices of the input means: the same vertices joined by different
/// curves enclose different areas.
enum class EdgeModel {
  geodesic,  ///< the shortest path on the ellipsoid (survey lines, most geodetic data)
  rhumb,     ///< the loxodrome of constant azimuth (parallels and meridians are rhumb lines; zones drawn on them)
  straight,  ///< straight in the plane of a projected CRS (data digitised or surveyed on that grid)
};
/// "geodesic", "rhumb" or "straight" (users give an edge model with its CRS, as EdgeSpec::parse() reads it);
/// never throws.
std::string_view to_string(EdgeModel model) noexcept;

/// An edge model and, for `straight`, the CRS in whose plane the edges are straight.
struct EdgeSpec {
  EdgeModel model = EdgeModel::geodesic;  ///< what the edges mean
  std::string crs;  ///< for `straight`: any CRS definition PROJ accepts; must be projected

  /// Parses "geodesic", "rhumb" or "straight-in=CRS" (e.g. "straight-in=EPSG:26915").
  /// Throws Error(invalid_argument) naming the text otherwise.
  static EdgeSpec parse(std::string_view text);
  /// "geodesic", "rhumb" or "straight-in=CRS".
  std::string to_string() const;
};

/// How an auditor is set up. Units are in the member names.
struct AuditOptions {
  /// CRS of the input coordinates: geographic (longitude, latitude in degrees, whatever the CRS's official axis
  /// order) or projected (easting, northing in the CRS's linear unit); projected vertices are taken to its base
  /// geographic CRS, whose ellipsoid carries the truth.
  std::string source_crs = "EPSG:4326";
  std::string target_crs;                ///< projected CRS whose grid is audited; required
  double height_m = 0;                   ///< ellipsoidal height of the features (ground lift), unless audit() is
                                         ///< given one per feature; within [-10 000 m, 100 000 m]
  /// An edge whose projected midpoint lies within this distance of its chord is taken as a parabola; any other
  /// edge is integrated by quadrature until dropping its top degree changes the length by at most 1/100 of it
  /// and the area by at most 1/100 of it times the chord (Budget::densified_grid; what bounds the result is
  /// Budget::densified_grid_bound).
  double densify_tolerance_m = 0.001;
  std::vector<Tolerance> tolerances;     ///< limits for the verdict; empty → no verdict
  /// What edges mean. Absent: geodesic for a geographic source, straight in the source CRS for a projected one.
  std::optional<EdgeSpec> edges;
  /// How far (degrees of longitude or latitude) a vertex may lie beyond the bounding box of the target CRS's area
  /// of use (from PROJ's database) before the feature is `unmeasurable`; within it the feature is measured and its
  /// message starts "warning: N of M vertices lie outside the area of use". ≥ 0; infinity never makes a feature
  /// unmeasurable for this reason (the warning stays). A CRS without an area of use is never checked. 5° keeps
  /// transverse Mercator zones (6° wide) usable a zone beyond their edge, where their scale error is still below
  /// about 0.2 % (common practice), and refuses a CRS used on the wrong continent.
  double area_of_use_margin_deg = 5;
  /// Geodesic edges of a path whose chords are all between 0.1 m and 5 km, with every vertex within 85° of the
  /// equator, are measured in closed form (length from the chord and Euler's radius, area on the authalic sphere
  /// with the parabolic bulge of each edge, midpoint as the foot of the chord's midpoint) instead of solving
  /// GeographicLib's inverse problem per edge: the whole audit about twice as fast (bench/run.sh). Tested against
  /// GeographicLib over randomized polygons in every latitude band (tests/short_edge_truth_test.cpp): areas within
  /// 1e-9 relative + 1e-3 m², lengths within 1e-9 relative + 1 nm, bearing errors within 0.01″. Any other path is
  /// solved by GeographicLib. Set to false to solve every edge with GeographicLib.
  bool closed_form_short_edges = true;
  /// Polygons whose only problems are topological (validate(): self-intersection, spike, crossing rings, holes
  /// outside or nested, disconnected interior, overlapping parts) are made valid by repair() and audited; the
  /// result's message starts with "repaired ..." and lists what was wrong. Off: such features are `invalid`.
  bool repair = false;
  /// Pins the datum transformation for reproducible runs: an operation PROJ's database names ("EPSG:1173"), which
  /// must be a candidate between the source CRS and the target (possibly as one step of it, or inverted), or a
  /// PROJ pipeline taking source longitude, latitude (degrees) to the target's easting, northing (its unit).
  /// Empty: per feature, the operation PROJ's own default would apply to the feature (see datum_operations()).
  std::string datum_operation;
};

/// One measure (length in m, or area in m²) with its budget.
struct Budget {
  double reference = 0;  ///< R
  double grid = 0;       ///< G
  double error = 0;      ///< G − R
  double error_ppm = 0;  ///< 10⁶ (G − R) / R; NaN when R = 0
  /// G − D in m or m²: straight chords between the projected vertices versus the projected images of the true
  /// edges, the arc-to-chord effect.
  double from_edges = 0;
  /// D − E_P in m or m²: the projection's scale distortion integrated along the edges (length) or over the area.
  double from_scale = 0;
  /// E_P − E_S in m or m²: the same feature on the target's ellipsoid after the datum transformation minus on the
  /// source's ellipsoid; 0 when the datums agree.
  double from_datum = 0;
  /// E_S − R in m or m²: ellipsoid versus ground at the feature's height (AuditResult::height_m); 0 without a height.
  double from_height = 0;
  // Intermediate measures, for readers who want them: E_S, E_P, D.
  /// E_S in m or m²: the measure with the true edges on the source CRS's ellipsoid (no height).
  double ellipsoid_source = 0;
  /// E_P in m or m²: the measure on the target CRS's ellipsoid of the vertices after the datum transformation.
  double ellipsoid_target = 0;
  /// D in m or m²: the vertices joined by the projected images of the true edges. An edge within
  /// AuditOptions::densify_tolerance_m δ of its chord at its midpoint is the parabola through its ends and
  /// midpoint; any other is integrated by Gauss–Legendre quadrature of the Chebyshev interpolant of its projected
  /// points, to an estimated error of δ/100 (length) and δ/100 × chord (area) per edge. Tested against a
  /// 2048-piece Richardson-extrapolated reference for edges of 1 m to 2000 km in seven projections: within 1e-9
  /// relative or 1e-4 m² and 1e-6 m (tests/edge_quadrature_test.cpp).
  double densified_grid = 0;

  // Bounds (m or m², ≥ 0; NaN: no bound can be given). Each bounds |computed − exact| of the figure it names:
  // what the arithmetic and the methods behind it may have got wrong, not how wrong the grid is. The datum part's
  // bound (and so the error's) also holds the datum transformation's stated accuracy. See README "Accuracy".
  /// Bound on E_S: GeographicLib's stated accuracy per edge (15 nm in length, 0.1 m² in area, Karney 2013 J.
  /// Geodesy 87:43, sect. 9; geodesic and rhumb edges), or the closed-form short-edge path's tested bound (1e-9
  /// relative + 1 nm, 1e-3 m²), plus the summation's round-off. For edges straight in a CRS (a refinement on the
  /// ellipsoid to the densify tolerance), per accepted piece: GeographicLib's accuracy for its three inverses
  /// (45 nm, 0.3 m²), the parabola's unseen cubic and quartic terms and its midpoint's offsets (as D's parabola
  /// edges), the midpoint's accuracy from PROJ (10 nm); held against a 100× finer refinement in
  /// tests/bounds_test.cpp, where the stated GeographicLib terms make it micrometres and square metres above the
  /// observed nanometres and 1e-4 m².
  double ellipsoid_source_bound = 0;
  /// Bound on E_P, as ellipsoid_source_bound (0 difference in method: the same walk on the target's ellipsoid).
  double ellipsoid_target_bound = 0;
  /// Bound on R: E_S's bound times the height lift, plus its round-off.
  double reference_bound = 0;
  /// Bound on G: the centred shoelace (area) or the sum of chords (length) in double precision with compensated
  /// summation (Higham 2002, ch. 4), plus the projection's own numerical accuracy, assumed 10 nm per vertex or
  /// 4 ulp of the coordinates, whichever is larger (PROJ's point-to-point jitter reaches about 5 nm, checked in
  /// tests/bounds_test.cpp; every vertex moved by ≤ ε: length ≤ 2ε per edge, area ≤ ε·perimeter + max(π, n)·ε²).
  double grid_bound = 0;
  /// Bound on D: G's round-off and projection terms, plus per edge: for an edge integrated by quadrature, the
  /// quadrature's bound (its coefficients beyond the accepted order extrapolated from the decay seen, their effect
  /// summed exactly, times 10; plus the nodes' noise and round-off: lib/edge_quadrature.hpp); for an edge taken as
  /// one parabola (d its midpoint's offset from its chord c, R the target's equatorial radius, q = c/R), the
  /// terms its three points cannot see: the cubic b₃ ≤ max(0.15·d·q, 1e-2·c·q²) (an image that changes its bend
  /// at the middle has d ≈ 0 but b₃ of that size), 4 · 25.6·b₃²/c in length, and the quartic b₄ ≤ max(0.09·q²·
  /// max(d/2, 2e-2·c·q²), 0.3·q·b₃), 4 · (32/15)·c·b₄ in twice the area (estimates from measured decay rates,
  /// tested at densify tolerances of 1 mm to 10 m), the midpoint's own offset along the chord, and the projected
  /// midpoint's accuracy (as G's); or 3d²/c and d·c per piece the fallback densifier accepted (the whole bulge).
  double densified_grid_bound = 0;
  double error_bound = 0;        ///< bound on G − R: grid_bound + reference_bound + the datum term (as from_datum)
  double from_edges_bound = 0;   ///< bound on G − D: grid_bound + densified_grid_bound
  double from_scale_bound = 0;   ///< bound on D − E_P: densified_grid_bound + ellipsoid_target_bound
  /// Bound on E_P − E_S: both ellipsoids' bounds plus, when the datums differ, the transformation's stated
  /// accuracy σ (TransformInfo::accuracy_m) propagated as a worst case: every vertex moved by ≤ σ independently
  /// changes a length by ≤ 2σ per edge and an area by ≤ σ·perimeter + max(π, n)·σ² (n vertices; the Steiner
  /// bound σ·P + πσ² for a boundary moved by ≤ σ, common practice). NaN when the accuracy is unknown (ballpark).
  double from_datum_bound = 0;
  double from_height_bound = 0;  ///< bound on E_S − R: reference_bound + ellipsoid_source_bound
  /// error_bound and from_datum_bound without the datum transformation's accuracy: what the computation itself
  /// may have got wrong (finite also for a ballpark transformation). The CSV rounds those figures to it.
  double error_computation_bound = 0;
  double from_datum_computation_bound = 0;  ///< see error_computation_bound
};

/// Distortion statistics over the vertices and densified points of a feature (Tissot's indicatrix from central
/// differences of the projection, relative error about 1e-9). The midpoint of an edge that needed no refinement is
/// left out (the scale varies linearly along such an edge to within ~(L/R)², so its extremes are at the vertices).
/// A feature with more than 64 points is sampled: the points extreme in longitude and latitude plus 60 evenly
/// spaced others. The factors are not computed at every point: those extreme in eight directions (anchors) are
/// evaluated, each statistic is modelled as a quadratic in local east and north fitted to them, and only the points
/// whose modelled value lies within four times the model's largest residual (plus the statistic's accuracy) of the
/// modelled extreme are evaluated too; features of at most 10 points, or whose anchors are degenerate, are
/// evaluated at every point. Tested against the factors at every vertex for conformal, equal-area and other
/// projections (tests/short_edge_truth_test.cpp): equal to 1e-9 relative (scales) and 1e-7° (angles).
struct Distortion {
  double scale_min = 0;        ///< smallest Tissot semi-axis b
  double scale_max = 0;        ///< largest Tissot semi-axis a
  double areal_scale_min = 0;  ///< smallest a·b
  double areal_scale_max = 0;  ///< largest a·b
  double angular_distortion_max_deg = 0;  ///< largest ω = 2 asin((a − b)/(a + b)), degrees
  /// Meridian convergence γ in degrees: the angle from true north to grid north, positive clockwise (for a
  /// transverse Mercator, positive east of the central meridian in the northern hemisphere: γ ≈ Δλ·sin φ).
  double convergence_min_deg = 0;
  /// Largest meridian convergence γ over the feature, degrees (sign as Distortion::convergence_min_deg).
  double convergence_max_deg = 0;
};

/// The distortion of the target projection at one point.
struct PointFactors {
  double meridional_scale = 0;   ///< h: scale along the meridian
  double parallel_scale = 0;     ///< k: scale along the parallel
  double areal_scale = 0;        ///< s = a·b
  double tissot_a = 0;           ///< largest scale at the point
  double tissot_b = 0;           ///< smallest scale at the point
  double angular_distortion_deg = 0;  ///< ω
  double convergence_deg = 0;         ///< γ, as in Distortion
};

/// What happened to a feature: ok (measured), invalid (the input is wrong; AuditResult::message lists every
/// problem) or unmeasurable (the input is fine but the grid measure is impossible or meaningless; the ellipsoidal
/// values are still reported).
enum class Status { ok, invalid, unmeasurable };
/// The status's name: "ok", "invalid" or "unmeasurable"; never throws.
std::string_view to_string(Status s) noexcept;

/// Everything gridtruth says about one feature.
struct AuditResult {
  /// ok, invalid or unmeasurable; see Status.
  Status status = Status::ok;
  /// Why invalid / unmeasurable, or a warning, then (after "; ") "exceeds " and the failed tolerances as given,
  /// comma-separated ("exceeds area<=500ppm"); empty when nothing to say. Every output writes this text.
  std::string message;
  /// The feature's geometry type, as given.
  GeometryType type = GeometryType::point;
  std::size_t vertices = 0;     ///< vertices as given
  std::optional<Budget> length;  ///< lines: length; polygons: perimeter (all rings); absent for points
  std::optional<Budget> area;    ///< polygons only
  std::optional<Distortion> distortion;            ///< absent when nothing could be projected
  std::optional<double> bearing_error_max_arcsec;  ///< largest |grid bearing of chord − geodesic azimuth|
  std::size_t densified_points = 0;                ///< true-edge points projected for D (midpoints, nodes)
  double height_m = 0;                             ///< the ellipsoidal height used for the ground lift
  /// The combined (scale × elevation) factor a surveyor multiplies ground distances by to get grid distances:
  /// mean grid scale × R_G/(R_G + h). The mean grid scale is G/E_P of the length (perimeter for polygons), and
  /// √(areal scale) at a point feature. Absent when the feature could not be measured.
  std::optional<double> combined_factor;
  /// pass or fail against AuditOptions::tolerances; none when no tolerance applies or the status is not ok.
  Verdict verdict = Verdict::none;
  std::vector<std::string> failed;  ///< the tolerances that failed, canonical text (empty on pass)
  /// The datum transformation applied to this feature: an index into Auditor::datum_operations(). Absent when
  /// none applies (identity, a pinned PROJ pipeline) or the feature never got that far (invalid input).
  std::optional<std::size_t> datum_operation;
};

/// One candidate operation PROJ found between the source CRS and the target (datum transformation + projection).
struct DatumOperation {
  std::string name;                  ///< PROJ's name, e.g. "Inverse of NAD27 to WGS 84 (6) + UTM zone 15N"
  std::optional<double> accuracy_m;  ///< stated accuracy (metres) when PROJ knows one
  bool is_ballpark = false;          ///< a ballpark (approximate, error up to hundreds of metres) operation
  bool grids_available = true;       ///< every grid it needs is installed (PROJ's search path; network stays off)
  std::vector<std::string> missing_grids;  ///< the short names of the grids it needs and lacks
  std::optional<AreaOfUse> area;     ///< its area of use (bounding box, degrees)
  bool usable = false;               ///< PROJ can apply it here (grids present); only these are ever chosen
  std::string proj_string;           ///< the pipeline (lon, lat degrees → easting, northing) when usable
};

/// The datum transformation used between S and P's base geographic CRS.
struct TransformInfo {
  std::string name;              ///< PROJ's name of the operation ("Null geographic offset ..." when none)
  std::optional<double> accuracy_m;  ///< its stated accuracy, when PROJ knows one
  bool is_identity = false;      ///< true when S and P's base CRS share datum and ellipsoid
  bool is_ballpark = false;      ///< true when PROJ only has a ballpark (approximate) operation
  std::string proj_string;       ///< the pipeline, when PROJ can express it
};

/// Audits features from a geographic source CRS against a projected target CRS.
///
/// Build once per (source, target, options): construction resolves both CRSs and chooses the datum
/// transformation (may take up to a few hundred milliseconds). Throws Error (unknown_crs, unsupported_crs,
/// no_transformation, invalid_argument) when it cannot be set up. audit() never throws for a bad feature: it
/// returns status `invalid` or `unmeasurable` with a message.
///
/// Thread-safety: an Auditor owns PROJ objects and must be used by one thread at a time. clone() gives an
/// independent auditor (sharing nothing mutable) for another thread; it is much cheaper than construction.
///
/// Accuracy: the truth is GeographicLib's geodesic length and area (errors of nanometres and below a square
/// metre per 10⁶ km², Karney 2013). D is a parabola per edge within the densify tolerance of its chord, else a
/// quadrature to δ/100 per edge (see Budget::densified_grid), so its error is far below that tolerance times the
/// perimeter; the distortion statistics come from central differences of the projection
/// (relative error about 1e-9). Every budget carries its bounds (Budget::*_bound), tested in
/// tests/bounds_test.cpp against GeodesicExact, long-double sums and a 1000× refined quadrature.
class Auditor {
 public:
  /// Resolves both CRSs and chooses the datum transformation (up to a few hundred milliseconds). Throws Error:
  /// unknown_crs (a definition PROJ cannot make a CRS of); unsupported_crs (a source that is neither geographic nor
  /// projected, a target that is not projected, straight edges in a CRS that is not projected); no_transformation
  /// (PROJ offers no operation); invalid_argument (no target CRS, densify_tolerance_m not a positive number,
  /// height_m outside [-10000, 100000] m, a negative area_of_use_margin_deg). A degenerate target is refused with
  /// unsupported_crs: a conversion parameter that is not finite or an angle beyond ±360°, or a projection that at
  /// its area of use's centre and at its natural origin fails to project, to round-trip within 1 mm, or to have
  /// finite positive scale factors.
  explicit Auditor(const AuditOptions& options);
  ~Auditor();
  /// Moves; the moved-from auditor may only be destroyed or assigned to.
  Auditor(Auditor&&) noexcept;
  /// Moves; the moved-from auditor may only be destroyed or assigned to.
  Auditor& operator=(Auditor&&) noexcept;
  Auditor(const Auditor&) = delete;
  Auditor& operator=(const Auditor&) = delete;

  /// An independent auditor with the same options and the same chosen transformation, for another thread; much
  /// cheaper than construction. Throws Error(no_transformation) in the rare case PROJ cannot copy its objects.
  Auditor clone() const;

  /// Audits one feature. Never throws for a bad feature. A feature whose projected vertices do not round-trip
  /// within 0.1 m (a sample of four), or whose scale factors are not finite and positive, is `unmeasurable`.
  AuditResult audit(const Geometry& geometry) const;
  /// Audits one feature at its own ellipsoidal height (metres), instead of AuditOptions::height_m. A height that
  /// is not finite or out of range makes the feature `invalid`.
  AuditResult audit(const Geometry& geometry, double height_m) const;
  /// Audits a batch, result i for geometry i.
  std::vector<AuditResult> audit(const std::vector<Geometry>& geometries) const;

  /// The target projection's distortion at a point given in the source CRS (lon, lat in degrees).
  /// Returns NaN fields where the projection fails.
  PointFactors factors(double lon_deg, double lat_deg) const;
  /// Projects a point given in the source CRS to the target CRS's plane, in the target CRS's linear unit
  /// (easting, northing). NaN where the projection fails.
  Coord project(double lon_deg, double lat_deg) const;

  /// The options the auditor was built with.
  const AuditOptions& options() const noexcept;
  /// What the source CRS resolved to (geographic or projected).
  const CrsInfo& source() const noexcept;
  /// What the target CRS resolved to (projected).
  const CrsInfo& target() const noexcept;
  /// The datum transformation chosen between the source CRS and the target's base geographic CRS. Without a
  /// pinned operation features may use different ones (AuditResult::datum_operation): this is the first usable
  /// candidate in PROJ's order.
  const TransformInfo& transform() const noexcept;
  /// Every candidate PROJ found from the source CRS to the target, usable or not, in PROJ's order (grids known to
  /// be available first, then by accuracy and area); empty when no datum transformation applies. Without
  /// AuditOptions::datum_operation each feature uses the operation PROJ's default picks for it: the one
  /// proj_create_crs_to_crs, given the feature's bounding box (source longitude, latitude) as area of interest,
  /// applies at the box's centre (only operations whose grids are installed; no network). All vertices of a
  /// feature use that operation. The choice is cached per pattern of the box against the candidates' areas.
  const std::vector<DatumOperation>& datum_operations() const noexcept;
  /// Warnings about the datum transformation of features that used the given datum_operations() indices (one
  /// sentence each): a ballpark operation, or one worse than 1 m, applied where a better candidate needs a grid
  /// that is not installed (named, with how to get it). Empty when there is nothing to say.
  std::vector<std::string> datum_warnings(const std::vector<std::size_t>& used) const;
  /// The edge model in force (AuditOptions::edges, or its default).
  const EdgeSpec& edges() const noexcept;

 private:
  struct Impl;
  explicit Auditor(std::unique_ptr<Impl> impl);
  std::unique_ptr<Impl> impl_;
};

/// Gaussian mean radius √(M·N) of an ellipsoid at a latitude, metres (used for the ground lift; common practice).
double gaussian_mean_radius_m(const Ellipsoid& ellipsoid, double lat_deg) noexcept;

}  // namespace gridtruth
