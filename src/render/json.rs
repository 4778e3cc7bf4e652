//! JSON output: exactly one object per command, each with `schema_version` and `command`. The
//! keys are a contract (CHANGELOG.md lists them): within a schema version keys are only ever
//! added, never renamed or removed. Each report is serialised through a derived view struct that
//! reads the same report the text renderer reads.

use serde::{Serialize, Serializer};
use serde_json::Value;

use crate::bounds::classical::locality::{NoSignallingProjection, SeparatingExpression};
use crate::bounds::classical::{
    ClassicalEstimate, ClassicalStatus, DeterministicStrategy, Method as ClassicalMethod,
};
use crate::bounds::entropy::ConditionalEntropy;
use crate::bounds::entropy::Preprocessing;
use crate::bounds::quantum::analysis::{Bipartition, Robustness};
use crate::bounds::quantum::npa::{Level, NpaBound};
use crate::bounds::quantum::symmetric::SymmetryUse;
use crate::model::scenario::{Scenario, ScoreKind, Sizes};
use crate::model::symmetry::SymmetryGroup;
use crate::optim::backend::Backend;
use crate::optim::lp::LpMethod;
use crate::optim::SolveStatus;
use crate::pipeline::{
    BestFlip, CommandKind, EntropyReport, EntropyResult, Extracting, FiniteSizeReport, GameReport,
    Gaps, KeyReport, LocalReport, MarginReport, RandomnessReport, Review, TangentTried,
    VerifyReport,
};
use crate::protocol::accumulation::Accumulation;
use crate::protocol::finite::Margin;
use crate::protocol::key::KeyRate;
use crate::protocol::randomness::Randomness;
use crate::protocol::CAUTION;

/// Version of the JSON schema; raised when a key is renamed or removed.
pub const SCHEMA_VERSION: u32 = 2;

/// Any report as a JSON value.
pub fn to_value<T: Serialize>(report: &T) -> Value {
    serde_json::to_value(report).unwrap_or_else(|e| {
        serde_json::json!({"schema_version": SCHEMA_VERSION, "error": {"kind": "internal", "message": e.to_string(), "location": null}})
    })
}

#[derive(Serialize)]
struct PlayerView<'a> {
    name: &'a str,
    questions: &'a [i64],
    answers: &'a [i64],
}

/// A symmetry in the game's own labels: the image of each player, of each question (per
/// player), and of each answer (per player and question).
#[derive(Serialize)]
struct GeneratorView<'a> {
    players: Vec<&'a str>,
    questions: std::collections::BTreeMap<&'a str, Vec<i64>>,
    answers: std::collections::BTreeMap<&'a str, Vec<Vec<i64>>>,
}

#[derive(Serialize)]
struct SymmetryView<'a> {
    #[serde(serialize_with = "crate::numbers::serialize_count")]
    order: u128,
    complete: bool,
    generators: Vec<GeneratorView<'a>>,
}

impl<'a> SymmetryView<'a> {
    fn of(s: &'a Scenario, g: &SymmetryGroup) -> Self {
        let p = s.parties();
        SymmetryView {
            order: g.order,
            complete: g.complete,
            generators: g
                .generators
                .iter()
                .map(|r| GeneratorView {
                    players: r.players.iter().map(|&j| p[j].name.as_str()).collect(),
                    questions: (0..p.len())
                        .map(|i| {
                            let image = &p[r.players[i]];
                            let labels = r.questions[i]
                                .iter()
                                .map(|&y| image.question_labels[y])
                                .collect();
                            (p[i].name.as_str(), labels)
                        })
                        .collect(),
                    answers: (0..p.len())
                        .map(|i| {
                            let image = &p[r.players[i]];
                            let labels = r.answers[i]
                                .iter()
                                .map(|t| t.iter().map(|&b| image.answer_labels[b]).collect())
                                .collect();
                            (p[i].name.as_str(), labels)
                        })
                        .collect(),
                })
                .collect(),
        }
    }
}

#[derive(Serialize)]
struct EstimatesView<'a> {
    classical: &'a ClassicalEstimate,
}

#[derive(Serialize)]
struct ClassicalDetailsView<'a> {
    status: ClassicalStatus,
    note: &'a Option<String>,
    method: ClassicalMethod,
    nodes: u64,
    seconds: f64,
    strategy: Value,
}

#[derive(Serialize)]
struct NoSignallingDetailsView {
    method: LpMethod,
    status: SolveStatus,
    certified_upper: Option<f64>,
    variables: usize,
    constraints: usize,
    seconds: f64,
}

#[derive(Serialize)]
struct BestLevelView<'a> {
    level: &'a Level,
    verified_upper: f64,
}

#[derive(Serialize)]
struct NpaView<'a> {
    quantum_upper: f64,
    verified_upper: f64,
    level: &'a Level,
    matrix_size: usize,
    moments: usize,
    status: SolveStatus,
    iterations: u32,
    seconds: f64,
    npa_primal: f64,
    /// The solver's relative primal–dual gap (not a gap between bounds: those are `gaps`).
    duality_gap: f64,
    residual: f64,
    solver: Backend,
    /// How the relaxation was reduced by the game's symmetries (null: solved in full).
    npa_symmetry: Option<&'a SymmetryUse>,
    #[serde(skip_serializing_if = "Option::is_none")]
    levels: Option<Vec<&'a NpaBound>>,
    #[serde(skip_serializing_if = "Option::is_none")]
    best_verified_upper: Option<BestLevelView<'a>>,
}

/// The NPA bound within `bounds`: the bounds at the top level, like the other bounds', and the
/// solve's details (status, time, iterations, accuracy) under `npa_details`, like
/// `classical_details` and `no_signalling_details`.
#[derive(Serialize)]
struct NpaInBoundsView<'a> {
    quantum_upper: f64,
    verified_upper: f64,
    npa_details: NpaDetailsView<'a>,
}

#[derive(Serialize)]
struct NpaDetailsView<'a> {
    level: &'a Level,
    matrix_size: usize,
    moments: usize,
    status: SolveStatus,
    iterations: u32,
    seconds: f64,
    primal: f64,
    /// The solver's relative primal–dual gap.
    duality_gap: f64,
    residual: f64,
    solver: Backend,
    /// How the relaxation was reduced by the game's symmetries (null: solved in full).
    symmetry: Option<&'a SymmetryUse>,
}

#[derive(Serialize)]
struct SeesawDetailsView {
    rounds: usize,
    seconds: f64,
}

#[derive(Serialize)]
struct SeesawView<'a> {
    quantum_lower: f64,
    dims: &'a [usize],
    seed: u64,
    restarts: usize,
    seesaw_details: SeesawDetailsView,
    /// The see-saw command's own time (other commands report theirs elsewhere).
    #[serde(skip_serializing_if = "Option::is_none")]
    seconds: Option<f64>,
}

#[derive(Serialize)]
struct EvaluatedView {
    value: f64,
    value_error: f64,
    quantum_lower: f64,
}

/// The JSON shape of a [`GameReport`].
#[derive(Serialize)]
struct GameReportView<'a> {
    schema_version: u32,
    command: CommandKind,
    game: &'a str,
    source: &'a str,
    kind: ScoreKind,
    players: Vec<PlayerView<'a>>,
    #[serde(skip_serializing_if = "Option::is_none")]
    sizes: Option<&'a Sizes>,
    #[serde(skip_serializing_if = "Option::is_none")]
    estimates: Option<EstimatesView<'a>>,
    #[serde(skip_serializing_if = "Option::is_none")]
    value_range: Option<(f64, f64)>,
    #[serde(skip_serializing_if = "Option::is_none")]
    per_round_score_range: Option<(f64, f64)>,
    /// With sizes: the symmetry group (null when the table is too large to search).
    #[serde(skip_serializing_if = "Option::is_none")]
    symmetry: Option<Option<SymmetryView<'a>>>,
    /// With sizes: the relabellings that keep the value on no-signalling behaviours.
    #[serde(skip_serializing_if = "Option::is_none")]
    symmetry_modulo_no_signalling: Option<Option<SymmetryView<'a>>>,
    /// The exact classical value; an incumbent goes under `classical_lower` only.
    #[serde(skip_serializing_if = "Option::is_none")]
    classical: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    classical_lower: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    classical_details: Option<ClassicalDetailsView<'a>>,
    #[serde(skip_serializing_if = "Option::is_none")]
    no_signalling: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    no_signalling_details: Option<NoSignallingDetailsView>,
    #[serde(flatten)]
    npa: Option<NpaView<'a>>,
    #[serde(flatten)]
    npa_in_bounds: Option<NpaInBoundsView<'a>>,
    #[serde(flatten)]
    seesaw: Option<SeesawView<'a>>,
    #[serde(flatten)]
    evaluated: Option<EvaluatedView>,
    #[serde(skip_serializing_if = "Option::is_none")]
    noisy: Option<&'a crate::pipeline::NoisyValue>,
    #[serde(skip_serializing_if = "Option::is_none")]
    entanglement: Option<&'a [Bipartition]>,
    #[serde(skip_serializing_if = "Option::is_none")]
    robustness: Option<Option<&'a Robustness>>,
    #[serde(skip_serializing_if = "Option::is_none")]
    quantum_settled: Option<bool>,
    #[serde(skip_serializing_if = "Option::is_none")]
    gaps: Option<Gaps>,
    warnings: &'a [String],
    #[serde(skip_serializing_if = "<[String]>::is_empty")]
    notes: &'a [String],
    #[serde(skip_serializing_if = "<[String]>::is_empty")]
    not_obtained: &'a [String],
}

/// `{player: {"questions": [...labels], "answers": [...labels]}}`.
pub fn strategy_json(s: &Scenario, st: &DeterministicStrategy) -> Value {
    let mut m = serde_json::Map::new();
    for (p, ans) in s.parties().iter().zip(&st.answers) {
        m.insert(
            p.name.clone(),
            serde_json::json!({
                "questions": p.question_labels,
                "answers": ans.iter().map(|&a| p.answer_labels[a]).collect::<Vec<_>>(),
            }),
        );
    }
    Value::Object(m)
}

impl<'a> GameReportView<'a> {
    fn of(r: &'a GameReport<'a>) -> Self {
        let s = &r.game.scenario;
        let exact = |want: ClassicalStatus| {
            r.classical
                .as_ref()
                .filter(|c| c.status == want)
                .map(|c| c.value)
        };
        let gaps = r.gaps();
        GameReportView {
            schema_version: SCHEMA_VERSION,
            command: r.command,
            game: &r.game.name,
            source: &r.game.source,
            kind: s.kind(),
            players: s
                .parties()
                .iter()
                .map(|p| PlayerView {
                    name: &p.name,
                    questions: &p.question_labels,
                    answers: &p.answer_labels,
                })
                .collect(),
            sizes: r.sizes.as_ref().map(|z| &z.sizes),
            estimates: r.sizes.as_ref().map(|z| EstimatesView {
                classical: &z.classical,
            }),
            value_range: r.sizes.as_ref().map(|z| z.value_range),
            per_round_score_range: r.sizes.as_ref().map(|z| z.per_round_score_range),
            symmetry: r
                .sizes
                .as_ref()
                .map(|z| z.symmetry.as_ref().map(|g| SymmetryView::of(s, g))),
            symmetry_modulo_no_signalling: r.sizes.as_ref().map(|z| {
                z.symmetry_modulo_no_signalling
                    .as_ref()
                    .map(|g| SymmetryView::of(s, g))
            }),
            classical: exact(ClassicalStatus::Exact),
            classical_lower: exact(ClassicalStatus::Incumbent),
            classical_details: r.classical.as_ref().map(|c| ClassicalDetailsView {
                status: c.status,
                note: &c.note,
                method: c.method,
                nodes: c.nodes,
                seconds: c.seconds,
                strategy: strategy_json(s, &c.strategy),
            }),
            no_signalling: r.no_signalling.as_ref().map(|ns| ns.value),
            no_signalling_details: r.no_signalling.as_ref().map(|ns| NoSignallingDetailsView {
                method: ns.method,
                status: ns.status,
                certified_upper: ns.certified_upper,
                variables: ns.variables,
                constraints: ns.constraints,
                seconds: ns.seconds,
            }),
            npa: r
                .npa
                .as_ref()
                .filter(|_| r.command != CommandKind::Bounds)
                .map(|b| {
                    let compared = !r.npa_levels.is_empty();
                    NpaView {
                        quantum_upper: b.quantum_upper,
                        verified_upper: b.verified_upper,
                        level: &b.level,
                        matrix_size: b.matrix_size,
                        moments: b.moments,
                        status: b.status,
                        iterations: b.iterations,
                        seconds: b.seconds,
                        npa_primal: b.primal,
                        duality_gap: b.gap,
                        residual: b.residual,
                        solver: b.solver,
                        npa_symmetry: b.symmetry.as_ref(),
                        levels: compared
                            .then(|| r.npa_levels.iter().chain(std::iter::once(b)).collect()),
                        best_verified_upper: r.best_npa().filter(|_| compared).map(|best| {
                            BestLevelView {
                                level: &best.level,
                                verified_upper: best.verified_upper,
                            }
                        }),
                    }
                }),
            npa_in_bounds: r
                .npa
                .as_ref()
                .filter(|_| r.command == CommandKind::Bounds)
                .map(|b| NpaInBoundsView {
                    quantum_upper: b.quantum_upper,
                    verified_upper: b.verified_upper,
                    npa_details: NpaDetailsView {
                        level: &b.level,
                        matrix_size: b.matrix_size,
                        moments: b.moments,
                        status: b.status,
                        iterations: b.iterations,
                        seconds: b.seconds,
                        primal: b.primal,
                        duality_gap: b.gap,
                        residual: b.residual,
                        solver: b.solver,
                        symmetry: b.symmetry.as_ref(),
                    },
                }),
            seesaw: r.seesaw.as_ref().map(|sw| SeesawView {
                quantum_lower: sw.quantum_lower,
                dims: &sw.dims,
                seed: sw.seed,
                restarts: sw.restarts,
                seesaw_details: SeesawDetailsView {
                    rounds: sw.rounds,
                    seconds: sw.seconds,
                },
                seconds: (r.command == CommandKind::Seesaw).then_some(sw.seconds),
            }),
            evaluated: r.evaluated.map(|v| EvaluatedView {
                value: v.value,
                value_error: v.error,
                quantum_lower: v.lower,
            }),
            noisy: r.noisy.as_ref(),
            entanglement: r.strategy_analysis.as_ref().map(|a| &a.bipartitions[..]),
            robustness: r.strategy_analysis.as_ref().map(|a| a.robustness.as_ref()),
            quantum_settled: r.quantum_settled(),
            gaps: (!gaps.is_empty()).then_some(gaps),
            warnings: &r.game.warnings,
            notes: &r.notes,
            not_obtained: &r.not_obtained,
        }
    }
}

impl Serialize for GameReport<'_> {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        GameReportView::of(self).serialize(serializer)
    }
}

#[derive(Serialize)]
struct MarginView<'a> {
    schema_version: u32,
    command: &'static str,
    game: &'a str,
    caution: &'static str,
    #[serde(skip_serializing_if = "Option::is_none")]
    estimator: Option<&'a str>,
    #[serde(flatten)]
    margin: &'a Margin,
}

impl Serialize for MarginReport<'_> {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        MarginView {
            schema_version: SCHEMA_VERSION,
            command: "margin",
            game: &self.game.name,
            caution: CAUTION,
            estimator: self.estimator.as_deref(),
            margin: &self.margin,
        }
        .serialize(serializer)
    }
}

#[derive(Serialize)]
struct RandomnessView<'a> {
    schema_version: u32,
    command: &'static str,
    game: &'a str,
    target: &'a str,
    #[serde(skip_serializing_if = "Option::is_none")]
    given: Option<&'a str>,
    caution: &'static str,
    #[serde(flatten)]
    one: Option<&'a Randomness>,
    #[serde(skip_serializing_if = "Option::is_none")]
    sweep: Option<&'a [Randomness]>,
    #[serde(skip_serializing_if = "<[String]>::is_empty")]
    not_obtained: &'a [String],
}

impl Serialize for RandomnessReport<'_> {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        let one = match &self.results[..] {
            [r] => Some(r),
            _ => None,
        };
        RandomnessView {
            schema_version: SCHEMA_VERSION,
            command: "randomness",
            game: &self.game.name,
            target: &self.target_name,
            given: self.given.as_deref(),
            caution: CAUTION,
            sweep: one.is_none().then_some(&self.results[..]),
            one,
            not_obtained: &self.not_obtained,
        }
        .serialize(serializer)
    }
}

#[derive(Serialize)]
struct EntropyView<'a> {
    schema_version: u32,
    command: &'static str,
    game: &'a str,
    target: &'a str,
    given: &'a str,
    results: &'a [EntropyResult],
    #[serde(skip_serializing_if = "<[String]>::is_empty")]
    not_obtained: &'a [String],
    assumptions: &'a [String],
    caution: &'static str,
}

#[derive(Serialize)]
struct SelfTestView<'a> {
    schema_version: u32,
    command: &'static str,
    game: &'a str,
    bound: &'a crate::bounds::quantum::selftest::FidelityBound,
    given: &'a str,
    target_from: &'a str,
    questions: [[i64; 2]; 2],
    assumptions: &'a [String],
    caution: &'static str,
}

impl Serialize for crate::pipeline::SelfTestReport<'_> {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        SelfTestView {
            schema_version: SCHEMA_VERSION,
            command: "self-test",
            game: &self.game.name,
            bound: &self.bound,
            given: &self.given,
            target_from: &self.target_from,
            questions: self.questions,
            assumptions: &self.assumptions,
            caution: CAUTION,
        }
        .serialize(serializer)
    }
}

#[derive(Serialize)]
struct DesignView<'a> {
    schema_version: u32,
    command: &'static str,
    game: &'a str,
    figure: crate::pipeline::DesignFigure,
    #[serde(skip_serializing_if = "Option::is_none")]
    about: &'a Option<String>,
    implementation: &'a crate::bounds::quantum::design::Implementation,
    value: &'a crate::pipeline::FigureValue,
    #[serde(skip_serializing_if = "Option::is_none")]
    threshold: &'a Option<crate::bounds::quantum::design::Threshold>,
    assumptions: &'a [String],
    caution: &'static str,
}

impl Serialize for crate::pipeline::DesignReport<'_> {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        DesignView {
            schema_version: SCHEMA_VERSION,
            command: "design",
            game: &self.game.name,
            figure: self.figure,
            about: &self.about,
            implementation: &self.implementation,
            value: &self.value,
            threshold: &self.threshold,
            assumptions: &self.assumptions,
            caution: CAUTION,
        }
        .serialize(serializer)
    }
}

impl Serialize for EntropyReport<'_> {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        EntropyView {
            schema_version: SCHEMA_VERSION,
            command: "entropy",
            game: &self.game.name,
            target: &self.target_name,
            given: &self.given,
            results: &self.results,
            not_obtained: &self.not_obtained,
            assumptions: &self.assumptions,
            caution: CAUTION,
        }
        .serialize(serializer)
    }
}

#[derive(Serialize)]
struct CurvePoint {
    rounds: u64,
    rate_per_round: f64,
}

#[derive(Serialize)]
struct FiniteSizeView<'a> {
    schema_version: u32,
    command: &'static str,
    game: &'a str,
    target: &'a str,
    extracting: Extracting,
    entropy: &'a ConditionalEntropy,
    tangents: &'a [TangentTried],
    run: &'a Accumulation,
    asymptotic_output_rate: f64,
    #[serde(skip_serializing_if = "Option::is_none")]
    max_test_rounds: Option<u64>,
    security_parts: Vec<SecurityPart<'a>>,
    security_total: f64,
    #[serde(skip_serializing_if = "Option::is_none")]
    key_disclosure: Option<KeyDisclosureView>,
    #[serde(skip_serializing_if = "Option::is_none")]
    completeness_error_log10: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    completeness_total: Option<f64>,
    fraction: f64,
    rounds_for_fraction: Option<u64>,
    curve: Vec<CurvePoint>,
    assumptions: &'a [String],
    caution: &'static str,
}

#[derive(Serialize)]
struct SecurityPart<'a> {
    name: &'a str,
    epsilon: f64,
}

#[derive(Serialize)]
struct KeyDisclosureView {
    leakage: crate::pipeline::Leakage,
    verification_error: f64,
    verification_hash_bits: f64,
    #[serde(skip_serializing_if = "Option::is_none")]
    correction_failure: Option<f64>,
}

impl Serialize for FiniteSizeReport<'_> {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        FiniteSizeView {
            schema_version: SCHEMA_VERSION,
            command: "finite-size",
            game: &self.game.name,
            target: &self.target_name,
            extracting: self.extracting,
            entropy: &self.entropy,
            tangents: &self.tangents,
            run: &self.run,
            asymptotic_output_rate: self.asymptotic_output_rate,
            max_test_rounds: self.max_test_rounds,
            security_parts: self
                .security_parts
                .iter()
                .map(|(name, epsilon)| SecurityPart {
                    name,
                    epsilon: *epsilon,
                })
                .collect(),
            security_total: self.security_total(),
            key_disclosure: self.key_disclosure.map(|k| KeyDisclosureView {
                leakage: k.leakage,
                verification_error: k.verification_error,
                verification_hash_bits: k.hash_bits(),
                correction_failure: k.correction_failure,
            }),
            completeness_error_log10: self.completeness_error_log10,
            completeness_total: self.completeness_total(),
            fraction: self.fraction,
            rounds_for_fraction: self.rounds_for_fraction,
            curve: self
                .curve
                .iter()
                .map(|&(rounds, rate_per_round)| CurvePoint {
                    rounds,
                    rate_per_round,
                })
                .collect(),
            assumptions: &self.assumptions,
            caution: CAUTION,
        }
        .serialize(serializer)
    }
}

#[derive(Serialize)]
struct KeyView<'a> {
    schema_version: u32,
    command: &'static str,
    chsh: f64,
    qber: f64,
    #[serde(skip_serializing_if = "Option::is_none")]
    noisy_preprocessing: Option<f64>,
    key_qber: f64,
    conditional_entropy: f64,
    key_rate: f64,
    threshold_qber: Option<f64>,
    best_noisy_preprocessing: BestFlip,
    bound: &'a str,
    caution: &'static str,
}

impl Serialize for KeyReport {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        let k: &KeyRate = &self.rate;
        KeyView {
            schema_version: SCHEMA_VERSION,
            command: "key",
            chsh: k.score,
            qber: k.qber,
            noisy_preprocessing: match self.preprocessing {
                Preprocessing::None => None,
                Preprocessing::Noisy { probability } => Some(probability),
            },
            key_qber: k.key_qber,
            conditional_entropy: k.conditional_entropy,
            key_rate: k.key_rate,
            threshold_qber: self.threshold_qber,
            best_noisy_preprocessing: self.best_flip,
            bound: k.bound,
            caution: CAUTION,
        }
        .serialize(serializer)
    }
}

#[derive(Serialize)]
struct VerifyView<'a> {
    schema_version: u32,
    command: &'static str,
    game: &'a str,
    certificate: &'a str,
    level: &'a Level,
    verified_upper: f64,
    claimed: f64,
    matches_claim: bool,
    #[serde(skip_serializing_if = "Option::is_none")]
    exact: Option<&'a crate::optim::exact::ExactBound>,
}

impl Serialize for VerifyReport<'_> {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        let v = &self.verification;
        VerifyView {
            schema_version: SCHEMA_VERSION,
            command: "verify",
            game: &self.game.name,
            certificate: &self.certificate,
            level: &v.level,
            verified_upper: v.verified_upper,
            claimed: v.claimed,
            matches_claim: v.matches_claim,
            exact: self.exact.as_ref().map(|e| &e.exact),
        }
        .serialize(serializer)
    }
}

/// The JSON shape of a [`LocalReport`], with where the separating expression was saved.
#[derive(Serialize)]
pub struct LocalView<'a> {
    schema_version: u32,
    command: &'static str,
    correlations: &'a str,
    local: bool,
    /// Null when the input is pure noise (the visibility is unbounded).
    visibility: Option<f64>,
    signalling: f64,
    deterministic_strategies: usize,
    separating: Option<&'a SeparatingExpression>,
    projection: Option<&'a NoSignallingProjection>,
    seconds: f64,
    saved: Option<&'a str>,
}

impl<'a> LocalView<'a> {
    /// The view of `r`; `saved` is the file the separating expression was written to.
    pub fn of(r: &'a LocalReport, saved: Option<&'a str>) -> Self {
        let t = &r.test;
        LocalView {
            schema_version: SCHEMA_VERSION,
            command: "local",
            correlations: &r.name,
            local: t.local,
            visibility: t.visibility.is_finite().then_some(t.visibility),
            signalling: t.signalling,
            deterministic_strategies: t.deterministic_strategies,
            separating: t.separating.as_ref(),
            projection: t.projection.as_ref(),
            seconds: t.seconds,
            saved,
        }
    }
}

#[derive(Serialize)]
struct ReviewView<'a> {
    schema_version: u32,
    command: &'static str,
    name: &'a str,
    verdict: String,
    generated: &'a str,
    game: &'a str,
    classical: f64,
    quantum_lower: Option<f64>,
    quantum_upper: Option<f64>,
    verified_upper: Option<f64>,
    no_signalling: Option<f64>,
    margin: &'a Margin,
    #[serde(skip_serializing_if = "Option::is_none")]
    estimator: Option<&'a str>,
    #[serde(skip_serializing_if = "Option::is_none")]
    rounds_needed_at_see_saw: Option<RoundsAtScore>,
    randomness: Option<&'a crate::pipeline::ReviewRandomness>,
    key: Option<&'a crate::pipeline::ReviewKey>,
    #[serde(skip_serializing_if = "Option::is_none")]
    entropy_key: Option<&'a crate::pipeline::ReviewEntropyKey>,
    #[serde(skip_serializing_if = "Option::is_none")]
    finite_size: Option<ReviewFiniteSizeView<'a>>,
    devices: &'a crate::pipeline::ReviewDevices,
    assumptions: Vec<String>,
    #[serde(skip_serializing_if = "<[String]>::is_empty")]
    notes: &'a [String],
    #[serde(skip_serializing_if = "<[String]>::is_empty")]
    not_obtained: &'a [String],
}

#[derive(Serialize)]
struct RoundsAtScore {
    score: f64,
    rounds: Option<u64>,
}

#[derive(Serialize)]
struct ReviewFiniteSizeView<'a> {
    observed_passes: bool,
    figures: &'a FiniteSizeReport<'a>,
}

impl Serialize for Review<'_> {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        let b = &self.bounds;
        ReviewView {
            schema_version: SCHEMA_VERSION,
            command: "review",
            name: &self.name,
            verdict: super::document::verdict(self),
            generated: &self.generated,
            game: &b.game.name,
            classical: self.classical,
            quantum_lower: b.seesaw.as_ref().map(|s| s.quantum_lower),
            quantum_upper: b.npa.as_ref().map(|n| n.quantum_upper),
            verified_upper: b.npa.as_ref().map(|n| n.verified_upper),
            no_signalling: b.no_signalling.as_ref().map(|n| n.value),
            margin: &self.margin,
            estimator: self.estimator.as_deref(),
            rounds_needed_at_see_saw: self
                .rounds_needed_at_see_saw
                .map(|(score, rounds)| RoundsAtScore { score, rounds }),
            randomness: self.randomness.as_ref(),
            key: self.key.as_ref(),
            entropy_key: self.entropy_key.as_ref(),
            finite_size: self.finite_size.as_ref().map(|f| ReviewFiniteSizeView {
                observed_passes: f.observed_passes,
                figures: &f.report,
            }),
            devices: &self.devices,
            assumptions: self.assumptions(),
            notes: &b.notes,
            not_obtained: &b.not_obtained,
        }
        .serialize(serializer)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::formats::game::{families, Game};
    use crate::pipeline::{self, BoundsOptions, Silent};

    fn keys(v: &Value) -> Vec<&str> {
        v.as_object().unwrap().keys().map(String::as_str).collect()
    }

    #[test]
    fn the_bounds_report_has_the_contracted_keys() {
        let game = Game::from_spec(&families::chsh(), "chsh").unwrap();
        let r = pipeline::bounds(&game, &BoundsOptions::default(), &Silent).unwrap();
        let v = to_value(&r);
        // serde_json's map is ordered by key, so this is the sorted list in CHANGELOG.md.
        assert_eq!(
            keys(&v),
            vec![
                "classical",
                "classical_details",
                "command",
                "dims",
                "entanglement",
                "game",
                "gaps",
                "kind",
                "no_signalling",
                "no_signalling_details",
                "npa_details",
                "players",
                "quantum_lower",
                "quantum_settled",
                "quantum_upper",
                "restarts",
                "robustness",
                "schema_version",
                "seed",
                "seesaw_details",
                "source",
                "verified_upper",
                "warnings",
            ]
            .into_iter()
            .collect::<std::collections::BTreeSet<_>>()
            .into_iter()
            .collect::<Vec<_>>()
        );
        assert_eq!(v["schema_version"], SCHEMA_VERSION);
        assert_eq!(v["command"], "bounds");
        assert_eq!(v["kind"], "win");
        assert_eq!(v["classical_details"]["status"], "exact");
        assert_eq!(v["no_signalling_details"]["method"], "simplex");
        // The NPA solve's own figures are its details, apart from the bounds' gaps.
        let npa = &v["npa_details"];
        assert_eq!(npa["status"], "solved");
        assert!(npa["solver"] == "moment-ipm" || npa["solver"] == "clarabel");
        assert!(npa["duality_gap"].as_f64().unwrap() < 1e-6);
        for key in [
            "level",
            "iterations",
            "moments",
            "seconds",
            "symmetry",
            "primal",
        ] {
            assert!(npa.get(key).is_some(), "{key}");
        }
        assert!(v["gaps"]["quantum_upper_minus_lower"].as_f64().unwrap() < 1e-6);
        assert_eq!(v["classical"], 0.75);
        assert_eq!(v["quantum_settled"], true);
    }

    #[test]
    fn an_incumbent_is_never_published_as_the_classical_value() {
        let game = Game::from_spec(&families::chsh(), "chsh").unwrap();
        let mut r = pipeline::classical(&game, &Default::default(), &Silent).unwrap();
        r.classical.as_mut().unwrap().status = ClassicalStatus::Incumbent;
        let v = to_value(&r);
        assert!(v.get("classical").is_none());
        assert_eq!(v["classical_lower"], 0.75);
        assert_eq!(v["classical_details"]["status"], "incumbent");
        let text = super::super::text::game_report(&r);
        assert!(text.contains("classical ≥"), "{text}");
        assert!(!text.contains("\nclassical  "), "{text}");
    }

    #[test]
    fn check_reports_the_symmetry_group_in_labels() {
        let game = Game::from_spec(&families::chsh(), "chsh").unwrap();
        let v = to_value(&pipeline::check(&game));
        assert_eq!(v["symmetry"]["order"], 16);
        assert_eq!(v["symmetry"]["complete"], true);
        let generators = v["symmetry"]["generators"].as_array().unwrap();
        assert!(!generators.is_empty());
        for g in generators {
            assert_eq!(g["players"].as_array().unwrap().len(), 2);
            assert_eq!(g["answers"]["alice"].as_array().unwrap().len(), 2);
        }
        let text = super::super::text::game_report(&pipeline::check(&game));
        assert!(text.contains("order 16"), "{text}");
    }

    #[test]
    fn key_and_verify_views_name_their_command() {
        let k = crate::pipeline::key(&crate::pipeline::KeyOptions {
            chsh: 2.5,
            qber: 0.02,
            ..Default::default()
        })
        .unwrap();
        let v = to_value(&k);
        assert_eq!(v["command"], "key");
        assert_eq!(v["chsh"], 2.5);
        assert_eq!(v["schema_version"], SCHEMA_VERSION);
        assert!(v["caution"]
            .as_str()
            .unwrap()
            .contains("not a security proof"));
    }
}
