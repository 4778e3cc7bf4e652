# Print an optspec for argparse to handle cmd's options that are independent of any subcommand.
function __fish_bellgap_global_optspecs
    string join \n h/help V/version
end

function __fish_bellgap_needs_command
    # Figure out if the current invocation already has a command.
    set -l cmd (commandline -opc)
    set -e cmd[1]
    argparse -s (__fish_bellgap_global_optspecs) -- $cmd 2>/dev/null
    or return
    if set -q argv[1]
        # Also print the command, so this can be used to figure out what it is.
        echo $argv[1]
        return 1
    end
    return 0
end

function __fish_bellgap_using_subcommand
    set -l cmd (__fish_bellgap_needs_command)
    test -z "$cmd"
    and return 1
    contains -- $cmd[1] $argv
end

complete -c bellgap -n "__fish_bellgap_needs_command" -s h -l help -d 'Print help'
complete -c bellgap -n "__fish_bellgap_needs_command" -s V -l version -d 'Print version'
complete -c bellgap -n "__fish_bellgap_needs_command" -f -a "check" -d 'Validate a game file and print its sizes and cost estimates'
complete -c bellgap -n "__fish_bellgap_needs_command" -f -a "classical" -d 'Exact classical value and an optimal deterministic strategy'
complete -c bellgap -n "__fish_bellgap_needs_command" -f -a "nosignal" -d 'No-signalling value (linear programme)'
complete -c bellgap -n "__fish_bellgap_needs_command" -f -a "bounds" -d 'Every bound available, then the gaps between them'
complete -c bellgap -n "__fish_bellgap_needs_command" -f -a "npa" -d 'Quantum upper bound from the NPA hierarchy, with a verified bound from the dual solution'
complete -c bellgap -n "__fish_bellgap_needs_command" -f -a "seesaw" -d 'Explicit quantum strategy by see-saw: a lower bound on the quantum value'
complete -c bellgap -n "__fish_bellgap_needs_command" -f -a "evaluate" -d 'Recompute a strategy file\'s value by the Born rule and check it; with entanglement, noise and detection-efficiency thresholds'
complete -c bellgap -n "__fish_bellgap_needs_command" -f -a "design" -d 'The best honest implementation under noise (visibility, detection efficiency, dark counts) for a figure, and the least efficiency or visibility at which the figure is positive'
complete -c bellgap -n "__fish_bellgap_needs_command" -f -a "self-test" -d 'Self-testing: a verified lower bound on the fidelity of the devices\' state (extracted by local SWAP isometries) with a target state, from a score, a behaviour or counts (two players, two questions each)'
complete -c bellgap -n "__fish_bellgap_needs_command" -f -a "margin" -d 'What an observed score over n rounds certifies: confidence bounds, margin over the classical value, p-value of classical devices, rounds needed'
complete -c bellgap -n "__fish_bellgap_needs_command" -f -a "randomness" -d 'Certified randomness: the adversary\'s guessing probability and the min-entropy per round at a given score (NPA with the score as a constraint)'
complete -c bellgap -n "__fish_bellgap_needs_command" -f -a "entropy" -d 'A verified lower bound on the conditional von Neumann entropy of a player\'s answer given a quantum adversary, H(A|X=x*, E), at a score or for an observed behaviour (Gauss–Radau hierarchy of NPA relaxations); with the Devetak–Winter key rate when asked'
complete -c bellgap -n "__fish_bellgap_needs_command" -f -a "finite-size" -d 'What a spot-checking run of n rounds certifies, by entropy accumulation: the smooth min-entropy, the certified bits of randomness (or key) and the rate per round, the n at which the rate reaches a fraction of its limit, and the rate against n'
complete -c bellgap -n "__fish_bellgap_needs_command" -f -a "key" -d 'Key figures for CHSH-based device-independent QKD (analytic bound)'
complete -c bellgap -n "__fish_bellgap_needs_command" -f -a "review" -d 'A self-contained review report of a protocol run: bounds, margins, randomness, key figures and the assumptions behind each'
complete -c bellgap -n "__fish_bellgap_needs_command" -f -a "verify" -d 'Re-check an NPA dual certificate without any solver and print the bound it proves'
complete -c bellgap -n "__fish_bellgap_needs_command" -f -a "local" -d 'Decide whether given correlations p(answers|questions) have a local model'
complete -c bellgap -n "__fish_bellgap_needs_command" -f -a "sweep" -d 'Run a list of commands, one per line of a file (e.g. `npa games/chsh.yaml --level 2`, without `bellgap`), and write each one\'s JSON result as a line of JSON Lines; a failing line gives its error object and the others still run. `--shard I/N` runs lines I, I+N, I+2N, ... of the list (counting from 1), so N jobs of a batch scheduler split it; `sweep-merge` joins their outputs'
complete -c bellgap -n "__fish_bellgap_needs_command" -f -a "sweep-merge" -d 'Merge the JSON Lines of a sweep\'s shards into one, in list order, after checking that every line of the list is there exactly once'
complete -c bellgap -n "__fish_bellgap_needs_command" -f -a "reference" -d 'Write the reference pages generated from the command definitions into a folder: a man page per command (`bellgap.1`, `bellgap-npa.1`, ...) and shell completions (`bellgap.bash`, `_bellgap` for zsh, `bellgap.fish`)'
complete -c bellgap -n "__fish_bellgap_needs_command" -f -a "family" -d 'Print a standard game or Bell expression as a game file'
complete -c bellgap -n "__fish_bellgap_needs_command" -f -a "help" -d 'Print this message or the help of the given subcommand(s)'
complete -c bellgap -n "__fish_bellgap_using_subcommand check" -l json -d 'Print exactly one JSON object on stdout'
complete -c bellgap -n "__fish_bellgap_using_subcommand check" -s q -l quiet -d 'No progress output on stderr'
complete -c bellgap -n "__fish_bellgap_using_subcommand check" -l force -d 'Run even when the size estimate says it would take very long'
complete -c bellgap -n "__fish_bellgap_using_subcommand check" -l allow-large -d 'Build game tables larger than the default memory limit'
complete -c bellgap -n "__fish_bellgap_using_subcommand check" -s h -l help -d 'Print help (see more with \'--help\')'
complete -c bellgap -n "__fish_bellgap_using_subcommand classical" -l method -d 'How to compute it: branch and bound, a MILP, or chosen by size' -r -f -a "auto\t''
search\t''
milp\t''"
complete -c bellgap -n "__fish_bellgap_using_subcommand classical" -l json -d 'Print exactly one JSON object on stdout'
complete -c bellgap -n "__fish_bellgap_using_subcommand classical" -s q -l quiet -d 'No progress output on stderr'
complete -c bellgap -n "__fish_bellgap_using_subcommand classical" -l force -d 'Run even when the size estimate says it would take very long'
complete -c bellgap -n "__fish_bellgap_using_subcommand classical" -l allow-large -d 'Build game tables larger than the default memory limit'
complete -c bellgap -n "__fish_bellgap_using_subcommand classical" -s h -l help -d 'Print help (see more with \'--help\')'
complete -c bellgap -n "__fish_bellgap_using_subcommand nosignal" -l save -d 'Write an optimal no-signalling behaviour as a correlations file (exact fractions when the LP\'s solution reads as one, checked exactly)' -r -F
complete -c bellgap -n "__fish_bellgap_using_subcommand nosignal" -l json -d 'Print exactly one JSON object on stdout'
complete -c bellgap -n "__fish_bellgap_using_subcommand nosignal" -s q -l quiet -d 'No progress output on stderr'
complete -c bellgap -n "__fish_bellgap_using_subcommand nosignal" -l force -d 'Run even when the size estimate says it would take very long'
complete -c bellgap -n "__fish_bellgap_using_subcommand nosignal" -l allow-large -d 'Build game tables larger than the default memory limit'
complete -c bellgap -n "__fish_bellgap_using_subcommand nosignal" -s h -l help -d 'Print help (see more with \'--help\')'
complete -c bellgap -n "__fish_bellgap_using_subcommand bounds" -l level -d 'NPA level for the quantum upper bound (default: chosen from the size estimate)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand bounds" -l solver -d 'SDP solver for the NPA bound' -r -f -a "auto\t''
ipm\t''
clarabel\t''
first-order\t''"
complete -c bellgap -n "__fish_bellgap_using_subcommand bounds" -l symmetry -d 'Reduce the NPA relaxation by the game\'s symmetries (`auto`) or solve it in full (`off`)' -r -f -a "auto\t''
off\t''"
complete -c bellgap -n "__fish_bellgap_using_subcommand bounds" -l budget -d 'Wall-clock seconds for the whole command: bounds estimated to need more than what is left are not started, and the NPA bound and see-saw stop at the time left' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand bounds" -l skip -d 'Bounds not to compute, comma separated' -r -f -a "classical\t'The exact classical value'
no-signalling\t'The no-signalling value'
npa\t'The NPA upper bound'
seesaw\t'The see-saw lower bound'"
complete -c bellgap -n "__fish_bellgap_using_subcommand bounds" -l table -d 'Print the bounds as a table to paste into a paper instead of the report (upper bounds rounded up, lower bounds down)' -r -f -a "csv\t'Comma-separated values'
latex\t'A LaTeX tabular'"
complete -c bellgap -n "__fish_bellgap_using_subcommand bounds" -l dim -d 'Local dimension of every player in the see-saw' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand bounds" -l dims -d 'Local dimension per player in the see-saw, comma separated (e.g. 2,3)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand bounds" -l restarts -d 'Random restarts of the see-saw (run in parallel; the best is kept)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand bounds" -l seed -d 'Seed of the see-saw\'s random starts (reported, so runs are reproducible)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand bounds" -l json -d 'Print exactly one JSON object on stdout'
complete -c bellgap -n "__fish_bellgap_using_subcommand bounds" -s q -l quiet -d 'No progress output on stderr'
complete -c bellgap -n "__fish_bellgap_using_subcommand bounds" -l force -d 'Run even when the size estimate says it would take very long'
complete -c bellgap -n "__fish_bellgap_using_subcommand bounds" -l allow-large -d 'Build game tables larger than the default memory limit'
complete -c bellgap -n "__fish_bellgap_using_subcommand bounds" -l json-lines -d 'Print each bound as soon as it is obtained, as one JSON object per line (the report so far, with `obtained` naming the bound), then the whole report as the last line'
complete -c bellgap -n "__fish_bellgap_using_subcommand bounds" -s h -l help -d 'Print help (see more with \'--help\')'
complete -c bellgap -n "__fish_bellgap_using_subcommand npa" -l level -d '`1`, `2`, ... (all words up to that length), `1+joint` (level 1 plus products of one operator per player), or patterns of player letters such as "1 A B AB AA". Several levels separated by `;` are compared (e.g. "1;1+joint;2")' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand npa" -l certificate -d 'Write the dual certificate (JSON) of the last level here; `bellgap verify` re-checks it' -r -F
complete -c bellgap -n "__fish_bellgap_using_subcommand npa" -l exact-certificate -d 'Write the last level\'s bound as a plain certificate (text, exact fractions) that `scripts/check_certificate.py` re-proves with Python\'s standard library alone' -r -F
complete -c bellgap -n "__fish_bellgap_using_subcommand npa" -l table -d 'Print the levels\' verified bounds as a table to paste into a paper instead of the report (rounded up)' -r -f -a "csv\t'Comma-separated values'
latex\t'A LaTeX tabular'"
complete -c bellgap -n "__fish_bellgap_using_subcommand npa" -l sdpa -d 'Write the last level\'s full relaxation in the SDPA sparse format (FILE) and its moment map (FILE.words), for external solvers; `verify --sdpa-level` reads their solutions back' -r -F
complete -c bellgap -n "__fish_bellgap_using_subcommand npa" -l svg -d 'Plot the verified bound against the level (SVG), when comparing levels' -r -F
complete -c bellgap -n "__fish_bellgap_using_subcommand npa" -l solver -d 'SDP solver: our interior-point method (`ipm`), `clarabel`, our first-order method (`first-order`), or `auto` (chosen from cost estimates, with fallbacks)' -r -f -a "auto\t''
ipm\t''
clarabel\t''
first-order\t''"
complete -c bellgap -n "__fish_bellgap_using_subcommand npa" -l symmetry -d 'Reduce the relaxation by the game\'s symmetries (`auto`) or solve it in full (`off`)' -r -f -a "auto\t''
off\t''"
complete -c bellgap -n "__fish_bellgap_using_subcommand npa" -l budget -d 'Stop the first-order solver after this many seconds and report the verified bound it has reached (marked as stopped at the time limit)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand npa" -l json -d 'Print exactly one JSON object on stdout'
complete -c bellgap -n "__fish_bellgap_using_subcommand npa" -s q -l quiet -d 'No progress output on stderr'
complete -c bellgap -n "__fish_bellgap_using_subcommand npa" -l force -d 'Run even when the size estimate says it would take very long'
complete -c bellgap -n "__fish_bellgap_using_subcommand npa" -l allow-large -d 'Build game tables larger than the default memory limit'
complete -c bellgap -n "__fish_bellgap_using_subcommand npa" -s h -l help -d 'Print help (see more with \'--help\')'
complete -c bellgap -n "__fish_bellgap_using_subcommand seesaw" -l dim -d 'Local dimension of every player in the see-saw' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand seesaw" -l dims -d 'Local dimension per player in the see-saw, comma separated (e.g. 2,3)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand seesaw" -l restarts -d 'Random restarts of the see-saw (run in parallel; the best is kept)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand seesaw" -l seed -d 'Seed of the see-saw\'s random starts (reported, so runs are reproducible)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand seesaw" -l save -d 'Write the best strategy (state and measurements) to this file' -r -F
complete -c bellgap -n "__fish_bellgap_using_subcommand seesaw" -l svg -d 'Plot the value against visibility and detection efficiency (SVG)' -r -F
complete -c bellgap -n "__fish_bellgap_using_subcommand seesaw" -l json -d 'Print exactly one JSON object on stdout'
complete -c bellgap -n "__fish_bellgap_using_subcommand seesaw" -s q -l quiet -d 'No progress output on stderr'
complete -c bellgap -n "__fish_bellgap_using_subcommand seesaw" -l force -d 'Run even when the size estimate says it would take very long'
complete -c bellgap -n "__fish_bellgap_using_subcommand seesaw" -l allow-large -d 'Build game tables larger than the default memory limit'
complete -c bellgap -n "__fish_bellgap_using_subcommand seesaw" -s h -l help -d 'Print help (see more with \'--help\')'
complete -c bellgap -n "__fish_bellgap_using_subcommand evaluate" -l svg -d 'Plot the value against visibility and detection efficiency (SVG)' -r -F
complete -c bellgap -n "__fish_bellgap_using_subcommand evaluate" -l json -d 'Print exactly one JSON object on stdout'
complete -c bellgap -n "__fish_bellgap_using_subcommand evaluate" -s q -l quiet -d 'No progress output on stderr'
complete -c bellgap -n "__fish_bellgap_using_subcommand evaluate" -l force -d 'Run even when the size estimate says it would take very long'
complete -c bellgap -n "__fish_bellgap_using_subcommand evaluate" -l allow-large -d 'Build game tables larger than the default memory limit'
complete -c bellgap -n "__fish_bellgap_using_subcommand evaluate" -l no-classical -d 'Skip the classical value (and so the robustness figures, which are measured against it); on a large game computing it can take long'
complete -c bellgap -n "__fish_bellgap_using_subcommand evaluate" -l normalise -d 'Divide the strategy\'s state by its norm before checking it (for amplitudes written rounded, such as 0.7071)'
complete -c bellgap -n "__fish_bellgap_using_subcommand evaluate" -s h -l help -d 'Print help (see more with \'--help\')'
complete -c bellgap -n "__fish_bellgap_using_subcommand design" -l figure -d 'The figure to maximise: the margin over the classical value, the certified min-entropy, the von Neumann entropy bound, or the Devetak–Winter key rate' -r -f -a "margin\t'The noisy score\'s margin over the classical value'
min-entropy\t'The certified min-entropy of the key player\'s answer'
entropy\t'The bound on the conditional von Neumann entropy H(A|X=x*, E)'
key-rate\t'The Devetak–Winter key rate (needs --key-with)'"
complete -c bellgap -n "__fish_bellgap_using_subcommand design" -l efficiency -d 'Detection efficiency in (0, 1]: one for every player, or one per player, comma separated' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand design" -l visibility -d 'Visibility in [0, 1]: the weight of the intended state against white noise' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand design" -l dark-counts -d 'Probability in [0, 1] that a round without a click registers a uniformly random answer' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand design" -l no-click -d 'What a round without a click is reported as: `best` (the best assignment per player and question), an answer label used by every player, or `extra` (each player\'s last answer means "no click" and a clicking detector never reports it)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand design" -l state -d 'Which states the search may use' -r -f -a "optimised\t'Any state of the local dimensions, optimised'
maximally-entangled\t'The maximally entangled state, fixed (two players of equal dimension)'"
complete -c bellgap -n "__fish_bellgap_using_subcommand design" -l threshold -d 'Search for the least value of this parameter at which the figure is positive (bisection, re-optimising at each point), instead of one noise level' -r -f -a "efficiency\t'Every player\'s detection efficiency (the same for all)'
visibility\t'The visibility'"
complete -c bellgap -n "__fish_bellgap_using_subcommand design" -l tolerance -d 'Width of the threshold\'s final bracket' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand design" -l curve-points -d 'Points of the figure-against-noise curve besides the bisection\'s own' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand design" -l player -d 'Whose answer (default: the first player)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand design" -l question -d 'To which question (label; default: the first)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand design" -l key-with -d 'Key rate: the other player, whose answers the key is reconciled with' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand design" -l key-question -d 'Key rate: that player\'s question (label; default: the first)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand design" -l randomness-level -d 'NPA level of the min-entropy\'s guessing-probability SDP' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand design" -l nodes -d 'Gauss–Radau nodes (2 to 64); one relaxation is solved per node but the last' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand design" -l level -d 'The players\' NPA level of each relaxation (default: 1+joint and the target players\' products of two of their own operators, e.g. `1 A B AB AA`, while the matrix side stays within 120; else 1+joint)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand design" -l adversary-words -d 'Which of the adversary\'s words join the players\' words' -r -f -a "letters\t''
with-projectors\t''
with-player-words\t''
with-pairs\t''"
complete -c bellgap -n "__fish_bellgap_using_subcommand design" -l moments -d 'Real symmetric or complex Hermitian moment matrices (the same bound; complex is a check and costs more)' -r -f -a "real\t''
complex\t''"
complete -c bellgap -n "__fish_bellgap_using_subcommand design" -l solver -d 'SDP solver of the relaxations (first-order is not offered: each node\'s bound needs an accurate dual)' -r -f -a "auto\t''
ipm\t''
clarabel\t''"
complete -c bellgap -n "__fish_bellgap_using_subcommand design" -l noisy-preprocessing -d 'Noisy preprocessing: the key player changes its answer with this probability (to each other answer alike) before the entropy is counted; the entropy and the error-correction term are both of the changed answer' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand design" -l symmetry -d 'Reduce the relaxations by the game\'s relabellings that keep the key player, its question and the key\'s answers\' roles (`auto`, with a score; a behaviour or counts are solved in full), or never (`off`). The bound is checked on the full relaxations either way' -r -f -a "auto\t''
off\t''"
complete -c bellgap -n "__fish_bellgap_using_subcommand design" -l dim -d 'Local dimension of every player in the see-saw' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand design" -l dims -d 'Local dimension per player in the see-saw, comma separated (e.g. 2,3)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand design" -l restarts -d 'Random restarts of the see-saw (run in parallel; the best is kept)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand design" -l seed -d 'Seed of the see-saw\'s random starts (reported, so runs are reproducible)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand design" -l save -d 'Write the implementation (state and measurements, before noise) to this file' -r -F
complete -c bellgap -n "__fish_bellgap_using_subcommand design" -l svg -d 'Plot the figure against the noise parameter (SVG; with --threshold)' -r -F
complete -c bellgap -n "__fish_bellgap_using_subcommand design" -l json -d 'Print exactly one JSON object on stdout'
complete -c bellgap -n "__fish_bellgap_using_subcommand design" -s q -l quiet -d 'No progress output on stderr'
complete -c bellgap -n "__fish_bellgap_using_subcommand design" -l force -d 'Run even when the size estimate says it would take very long'
complete -c bellgap -n "__fish_bellgap_using_subcommand design" -l allow-large -d 'Build game tables larger than the default memory limit'
complete -c bellgap -n "__fish_bellgap_using_subcommand design" -s h -l help -d 'Print help (see more with \'--help\')'
complete -c bellgap -n "__fish_bellgap_using_subcommand self-test" -l score -d 'The score (in the game\'s own units): the bound holds for every quantum behaviour scoring at least this' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand self-test" -l behaviour -d 'Condition on a behaviour instead: a correlations file (with rounds, the confidence region of the counts they stand for; without, every behaviour within 1e-6)' -r -F
complete -c bellgap -n "__fish_bellgap_using_subcommand self-test" -l counts -d 'Condition on a lab\'s counts instead: every quantum behaviour in their confidence region (error `--alpha`)' -r -F
complete -c bellgap -n "__fish_bellgap_using_subcommand self-test" -l alpha -d 'The confidence region\'s error probability (with --counts)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand self-test" -l target -d 'The target\'s four real amplitudes of |00⟩, |01⟩, |10⟩, |11⟩, comma separated (default: the state the see-saw\'s best strategy extracts to)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand self-test" -l strategy -d 'Take the target from this strategy file\'s extracted state instead' -r -F
complete -c bellgap -n "__fish_bellgap_using_subcommand self-test" -l questions -d 'The question labels whose measurements build each player\'s Z and X: the first player\'s two, then the second\'s (default: each player\'s first two)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand self-test" -l level -d 'The NPA level (default: `1 A B AA AB BB AAB ABB AABB`)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand self-test" -l dim -d 'Local dimension of every player in the see-saw' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand self-test" -l dims -d 'Local dimension per player in the see-saw, comma separated (e.g. 2,3)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand self-test" -l restarts -d 'Random restarts of the see-saw (run in parallel; the best is kept)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand self-test" -l seed -d 'Seed of the see-saw\'s random starts (reported, so runs are reproducible)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand self-test" -l json -d 'Print exactly one JSON object on stdout'
complete -c bellgap -n "__fish_bellgap_using_subcommand self-test" -s q -l quiet -d 'No progress output on stderr'
complete -c bellgap -n "__fish_bellgap_using_subcommand self-test" -l force -d 'Run even when the size estimate says it would take very long'
complete -c bellgap -n "__fish_bellgap_using_subcommand self-test" -l allow-large -d 'Build game tables larger than the default memory limit'
complete -c bellgap -n "__fish_bellgap_using_subcommand self-test" -s h -l help -d 'Print help (see more with \'--help\')'
complete -c bellgap -n "__fish_bellgap_using_subcommand margin" -l rounds -d 'Number of rounds played' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand margin" -l counts -d 'The lab\'s counts instead of a summary: a counts file (per joint question, the rounds and the count of each joint answer, no-clicks binned as the file says); the per-round estimator is stated in the output' -r -F
complete -c bellgap -n "__fish_bellgap_using_subcommand margin" -l wins -d 'Rounds won (a game)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand margin" -l score-sum -d 'Sum of per-round scores (a Bell expression or a scored game)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand margin" -l score-range -d 'Smallest and largest possible per-round score, as `LO,HI` (default: the game\'s own range; a narrower one is refused, since the bounds would not hold)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand margin" -l alpha -d 'Error probability of the confidence bounds' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand margin" -l target-p-value -d 'p-value to reach when computing the rounds needed' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand margin" -l expected -d 'Expected mean score for the rounds needed (default: the observed mean)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand margin" -l json -d 'Print exactly one JSON object on stdout'
complete -c bellgap -n "__fish_bellgap_using_subcommand margin" -s q -l quiet -d 'No progress output on stderr'
complete -c bellgap -n "__fish_bellgap_using_subcommand margin" -l force -d 'Run even when the size estimate says it would take very long'
complete -c bellgap -n "__fish_bellgap_using_subcommand margin" -l allow-large -d 'Build game tables larger than the default memory limit'
complete -c bellgap -n "__fish_bellgap_using_subcommand margin" -s h -l help -d 'Print help (see more with \'--help\')'
complete -c bellgap -n "__fish_bellgap_using_subcommand randomness" -l score -d 'The score (in the game\'s own units)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand randomness" -l sweep -d 'Sweep the score: LOW:HIGH:POINTS' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand randomness" -l counts -d 'A lab\'s counts instead of a score: the bound at their lower confidence score (exact binomial for a win/lose game, Hoeffding otherwise; error `--alpha`, i.i.d. rounds)' -r -F
complete -c bellgap -n "__fish_bellgap_using_subcommand randomness" -l alpha -d 'The lower confidence score\'s error probability (with --counts)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand randomness" -l player -d 'Whose answer (default: the first player)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand randomness" -l question -d 'To which question (label; default: the first)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand randomness" -l with -d 'Also this second player\'s answer (the pair of answers)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand randomness" -l with-question -d 'The second player\'s question (label; default: the first)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand randomness" -l level -d 'NPA level of the relaxation' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand randomness" -l svg -d 'Write the min-entropy curve of a sweep as an SVG plot' -r -F
complete -c bellgap -n "__fish_bellgap_using_subcommand randomness" -l sdpa -d 'Write the guessing-probability SDP at the score (one) in the SDPA sparse format, with its variable map (FILE.words), for external solvers' -r -F
complete -c bellgap -n "__fish_bellgap_using_subcommand randomness" -l sdpa-solution -d 'Instead of solving, verify an external solver\'s solution (SDPA output format) of the SDP that `--sdpa` writes at the same score and level' -r -F
complete -c bellgap -n "__fish_bellgap_using_subcommand randomness" -l json -d 'Print exactly one JSON object on stdout'
complete -c bellgap -n "__fish_bellgap_using_subcommand randomness" -s q -l quiet -d 'No progress output on stderr'
complete -c bellgap -n "__fish_bellgap_using_subcommand randomness" -l force -d 'Run even when the size estimate says it would take very long'
complete -c bellgap -n "__fish_bellgap_using_subcommand randomness" -l allow-large -d 'Build game tables larger than the default memory limit'
complete -c bellgap -n "__fish_bellgap_using_subcommand randomness" -l exact -d 'Also prove each bound in exact rational arithmetic (the dual rounded to rationals, its positive semidefiniteness proven exactly) and print it as a fraction'
complete -c bellgap -n "__fish_bellgap_using_subcommand randomness" -s h -l help -d 'Print help (see more with \'--help\')'
complete -c bellgap -n "__fish_bellgap_using_subcommand entropy" -l score -d 'The score (in the game\'s own units): the bound holds for every quantum behaviour scoring at least this' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand entropy" -l sweep -d 'Sweep the score: LOW:HIGH:POINTS' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand entropy" -l behaviour -d 'Condition on the devices\' full behaviour instead: a correlations file with the game\'s players (it must be no-signalling)' -r -F
complete -c bellgap -n "__fish_bellgap_using_subcommand entropy" -l counts -d 'Condition on a lab\'s counts instead: every quantum behaviour in their confidence region (two-sided Clopper–Pearson intervals for every probability, union bound, error `--alpha`; i.i.d. rounds). Slightly signalling data need no projection; data with no quantum behaviour in the region are refused' -r -F
complete -c bellgap -n "__fish_bellgap_using_subcommand entropy" -l alpha -d 'The confidence region\'s error probability (with --counts)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand entropy" -l strategy -d 'Condition on the behaviour of a strategy file instead (as written by `bellgap seesaw --save`), computed by the Born rule' -r -F
complete -c bellgap -n "__fish_bellgap_using_subcommand entropy" -l player -d 'Whose answer (default: the first player)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand entropy" -l question -d 'To which question (label; default: the first)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand entropy" -l with -d 'Also this second player\'s answer (the pair of answers)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand entropy" -l with-question -d 'The second player\'s question (label; default: the first)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand entropy" -l nodes -d 'Gauss–Radau nodes (2 to 64); one relaxation is solved per node but the last' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand entropy" -l level -d 'The players\' NPA level of each relaxation (default: 1+joint and the target players\' products of two of their own operators, e.g. `1 A B AB AA`, while the matrix side stays within 120; else 1+joint)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand entropy" -l adversary-words -d 'Which of the adversary\'s words join the players\' words' -r -f -a "letters\t''
with-projectors\t''
with-player-words\t''
with-pairs\t''"
complete -c bellgap -n "__fish_bellgap_using_subcommand entropy" -l moments -d 'Real symmetric or complex Hermitian moment matrices (the same bound; complex is a check and costs more)' -r -f -a "real\t''
complex\t''"
complete -c bellgap -n "__fish_bellgap_using_subcommand entropy" -l solver -d 'SDP solver of the relaxations (first-order is not offered: each node\'s bound needs an accurate dual)' -r -f -a "auto\t''
ipm\t''
clarabel\t''"
complete -c bellgap -n "__fish_bellgap_using_subcommand entropy" -l noisy-preprocessing -d 'Noisy preprocessing: the key player changes its answer with this probability (to each other answer alike) before the entropy is counted; the entropy and the error-correction term are both of the changed answer' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand entropy" -l symmetry -d 'Reduce the relaxations by the game\'s relabellings that keep the key player, its question and the key\'s answers\' roles (`auto`, with a score; a behaviour or counts are solved in full), or never (`off`). The bound is checked on the full relaxations either way' -r -f -a "auto\t''
off\t''"
complete -c bellgap -n "__fish_bellgap_using_subcommand entropy" -l key-with -d 'Key rate: the player whose answers the key is reconciled with (needs --behaviour or --strategy)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand entropy" -l key-question -d 'Key rate: that player\'s question (label; default: the first)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand entropy" -l error-rate -d 'Key rate: the probability that the key answers differ (H(A|B) by Fano\'s bound)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand entropy" -l sdpa -d 'Write each node\'s SDP at the score (one) in the SDPA sparse format, as PREFIX-node-KK.dat-s (K from 01) with its variable map (.words), for external solvers' -r -F
complete -c bellgap -n "__fish_bellgap_using_subcommand entropy" -l sdpa-solutions -d 'Instead of solving, verify external solvers\' solutions (SDPA output format) of the node SDPs that `--sdpa` writes at the same score and options, read from PREFIX-node-KK.out, and sum the bound they prove' -r -F
complete -c bellgap -n "__fish_bellgap_using_subcommand entropy" -l json -d 'Print exactly one JSON object on stdout'
complete -c bellgap -n "__fish_bellgap_using_subcommand entropy" -s q -l quiet -d 'No progress output on stderr'
complete -c bellgap -n "__fish_bellgap_using_subcommand entropy" -l force -d 'Run even when the size estimate says it would take very long'
complete -c bellgap -n "__fish_bellgap_using_subcommand entropy" -l allow-large -d 'Build game tables larger than the default memory limit'
complete -c bellgap -n "__fish_bellgap_using_subcommand entropy" -l exact -d 'With --sdpa-solutions: prove each node\'s bound in exact rational arithmetic'
complete -c bellgap -n "__fish_bellgap_using_subcommand entropy" -s h -l help -d 'Print help (see more with \'--help\')'
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -l rounds -d 'Rounds n of the run' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -l testing -d 'Probability γ that a round is a test round (questions from the game\'s distribution)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -l threshold -d 'The score per test round the run must reach to pass (in the game\'s own units): the entropy is credited at this score' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -l expected -d 'The honest devices\' expected score per test round, for the completeness error' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -l smoothing -d 'Smoothing parameter ε_s' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -l pass-floor -d 'Pass floor ε_EA: the bound covers runs that pass with at least this probability' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -l extractor-error -d 'Error ε_ext of the extractor (or of privacy amplification)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -l fraction -d 'Report the rounds at which the rate reaches this fraction of its limit' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -l key-disclosed-bits -d 'Key instead of randomness: the bits error correction disclosed over the run (the verification hash is counted separately, from --verification-error)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -l key-error-rate -d 'Key instead of randomness: the key pair\'s error rate Q; error correction then discloses n·f·(h(Q) + Q·log₂(d − 1)) bits (Fano\'s bound times the efficiency f)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -l ec-efficiency -d 'Key: the error-correcting code\'s efficiency f ≥ 1 (default 1.16, common practice in reports of experiments; state your code\'s own)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -l verification-error -d 'Key: ε_EC, the verification hash\'s collision probability (the key\'s correctness error); the hash discloses ⌈log₂(1/ε_EC)⌉ bits [default: 1e-9]' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -l correction-failure -d 'Key: the probability that error correction fails on honest devices, as the code\'s designer states it (added to the completeness error; not computed here)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -l max-test-rounds -d 'Key: the most test rounds the protocol allows (default: a Chernoff cap that honest runs exceed with probability at most 1e-9)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -l statement -d 'Which entropy accumulation statement certifies: smaller (both evaluated, the smaller bound certified), improved-second-order or original' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -l tangent -d 'The score where the min-tradeoff line touches the entropy bound (default: the best of --tangent-points scores from the threshold down towards the classical value)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -l tangent-points -d 'How many tangent scores the search tries (1 to 32; each is one entropy computation)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -l player -d 'Whose answer (default: the first player)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -l question -d 'To which question (label; default: the first)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -l with -d 'Also this second player\'s answer (the pair of answers)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -l with-question -d 'The second player\'s question (label; default: the first)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -l nodes -d 'Gauss–Radau nodes (2 to 64); one relaxation is solved per node but the last' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -l level -d 'The players\' NPA level of each relaxation (default: 1+joint and the target players\' products of two of their own operators, e.g. `1 A B AB AA`, while the matrix side stays within 120; else 1+joint)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -l adversary-words -d 'Which of the adversary\'s words join the players\' words' -r -f -a "letters\t''
with-projectors\t''
with-player-words\t''
with-pairs\t''"
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -l moments -d 'Real symmetric or complex Hermitian moment matrices (the same bound; complex is a check and costs more)' -r -f -a "real\t''
complex\t''"
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -l solver -d 'SDP solver of the relaxations (first-order is not offered: each node\'s bound needs an accurate dual)' -r -f -a "auto\t''
ipm\t''
clarabel\t''"
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -l noisy-preprocessing -d 'Noisy preprocessing: the key player changes its answer with this probability (to each other answer alike) before the entropy is counted; the entropy and the error-correction term are both of the changed answer' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -l symmetry -d 'Reduce the relaxations by the game\'s relabellings that keep the key player, its question and the key\'s answers\' roles (`auto`, with a score; a behaviour or counts are solved in full), or never (`off`). The bound is checked on the full relaxations either way' -r -f -a "auto\t''
off\t''"
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -l svg -d 'Write the rate against n as an SVG plot' -r -F
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -l json -d 'Print exactly one JSON object on stdout'
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -s q -l quiet -d 'No progress output on stderr'
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -l force -d 'Run even when the size estimate says it would take very long'
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -l allow-large -d 'Build game tables larger than the default memory limit'
complete -c bellgap -n "__fish_bellgap_using_subcommand finite-size" -s h -l help -d 'Print help (see more with \'--help\')'
complete -c bellgap -n "__fish_bellgap_using_subcommand key" -l chsh -d 'CHSH correlator value S (at most 2√2; the entropy bound is 0 at or below 2)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand key" -l qber -d 'Quantum bit error rate, in [0, 0.5]' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand key" -l noisy-preprocessing -d 'Noisy preprocessing: the key player flips its bit with this probability (in [0, 0.5]) before error correction' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand key" -l json -d 'Print exactly one JSON object on stdout'
complete -c bellgap -n "__fish_bellgap_using_subcommand key" -s q -l quiet -d 'No progress output on stderr (accepted for uniformity: `key` has none)'
complete -c bellgap -n "__fish_bellgap_using_subcommand key" -s h -l help -d 'Print help'
complete -c bellgap -n "__fish_bellgap_using_subcommand review" -s o -l output -d 'Write the report here instead of stdout' -r -F
complete -c bellgap -n "__fish_bellgap_using_subcommand review" -l markdown -d 'Markdown instead of HTML'
complete -c bellgap -n "__fish_bellgap_using_subcommand review" -l json -d 'Print exactly one JSON object on stdout instead of the report'
complete -c bellgap -n "__fish_bellgap_using_subcommand review" -s q -l quiet -d 'No progress output on stderr'
complete -c bellgap -n "__fish_bellgap_using_subcommand review" -s h -l help -d 'Print help'
complete -c bellgap -n "__fish_bellgap_using_subcommand verify" -l sdpa-level -d 'The file is an external solver\'s solution in SDPA output format for the relaxation `npa --sdpa` exported at this level: its dual is verified on our own relaxation' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand verify" -l json -d 'Print exactly one JSON object on stdout'
complete -c bellgap -n "__fish_bellgap_using_subcommand verify" -s q -l quiet -d 'No progress output on stderr'
complete -c bellgap -n "__fish_bellgap_using_subcommand verify" -l force -d 'Run even when the size estimate says it would take very long'
complete -c bellgap -n "__fish_bellgap_using_subcommand verify" -l allow-large -d 'Build game tables larger than the default memory limit'
complete -c bellgap -n "__fish_bellgap_using_subcommand verify" -l exact -d 'Also prove the bound in exact rational arithmetic (the dual rounded to rationals, its positive semidefiniteness proven exactly) and print it as a fraction'
complete -c bellgap -n "__fish_bellgap_using_subcommand verify" -s h -l help -d 'Print help (see more with \'--help\')'
complete -c bellgap -n "__fish_bellgap_using_subcommand local" -l save -d 'Write the separating Bell expression (if any) as a game file here' -r -F
complete -c bellgap -n "__fish_bellgap_using_subcommand local" -l counts -d 'The file is a counts file: the test runs on its frequencies, with its rounds for the signalling p-value'
complete -c bellgap -n "__fish_bellgap_using_subcommand local" -l force -d 'Run even when the estimate says it would take very long'
complete -c bellgap -n "__fish_bellgap_using_subcommand local" -l json -d 'Print exactly one JSON object on stdout'
complete -c bellgap -n "__fish_bellgap_using_subcommand local" -s q -l quiet -d 'No progress output on stderr'
complete -c bellgap -n "__fish_bellgap_using_subcommand local" -s h -l help -d 'Print help (see more with \'--help\')'
complete -c bellgap -n "__fish_bellgap_using_subcommand sweep" -l shard -d 'Run only this shard, I of N (1 ≤ I ≤ N)' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand sweep" -s o -l output -d 'Write the JSON Lines here (atomically) instead of stdout' -r -F
complete -c bellgap -n "__fish_bellgap_using_subcommand sweep" -l json -d 'Print one JSON object (a summary, with the records when there is no --output)'
complete -c bellgap -n "__fish_bellgap_using_subcommand sweep" -s q -l quiet -d 'No progress output on stderr'
complete -c bellgap -n "__fish_bellgap_using_subcommand sweep" -s h -l help -d 'Print help'
complete -c bellgap -n "__fish_bellgap_using_subcommand sweep-merge" -s o -l output -d 'Write the merged JSON Lines here (atomically) instead of stdout' -r -F
complete -c bellgap -n "__fish_bellgap_using_subcommand sweep-merge" -l json -d 'Print one JSON object (a summary, with the records when there is no --output)'
complete -c bellgap -n "__fish_bellgap_using_subcommand sweep-merge" -s q -l quiet -d 'No progress output on stderr'
complete -c bellgap -n "__fish_bellgap_using_subcommand sweep-merge" -s h -l help -d 'Print help'
complete -c bellgap -n "__fish_bellgap_using_subcommand reference" -l json -d 'Print one JSON object listing the files written'
complete -c bellgap -n "__fish_bellgap_using_subcommand reference" -s q -l quiet -d 'No progress output on stderr (accepted for uniformity: `reference` has none)'
complete -c bellgap -n "__fish_bellgap_using_subcommand reference" -s h -l help -d 'Print help'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and not __fish_seen_subcommand_from chsh chsh-expression xor odd-cycle magic-square ghz cglmp i3322 chained mermin svetlichny chsh-mod tilted-chsh product help" -l json -d 'Print the game as JSON (also a valid game file) instead of YAML'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and not __fish_seen_subcommand_from chsh chsh-expression xor odd-cycle magic-square ghz cglmp i3322 chained mermin svetlichny chsh-mod tilted-chsh product help" -s q -l quiet -d 'No progress output on stderr (accepted for uniformity: `family` has none)'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and not __fish_seen_subcommand_from chsh chsh-expression xor odd-cycle magic-square ghz cglmp i3322 chained mermin svetlichny chsh-mod tilted-chsh product help" -s h -l help -d 'Print help'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and not __fish_seen_subcommand_from chsh chsh-expression xor odd-cycle magic-square ghz cglmp i3322 chained mermin svetlichny chsh-mod tilted-chsh product help" -f -a "chsh" -d 'CHSH game (win iff a xor b = x·y)'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and not __fish_seen_subcommand_from chsh chsh-expression xor odd-cycle magic-square ghz cglmp i3322 chained mermin svetlichny chsh-mod tilted-chsh product help" -f -a "chsh-expression" -d 'CHSH expression in correlators, E00 + E01 + E10 − E11'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and not __fish_seen_subcommand_from chsh chsh-expression xor odd-cycle magic-square ghz cglmp i3322 chained mermin svetlichny chsh-mod tilted-chsh product help" -f -a "xor" -d 'XOR game from a sign table'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and not __fish_seen_subcommand_from chsh chsh-expression xor odd-cycle magic-square ghz cglmp i3322 chained mermin svetlichny chsh-mod tilted-chsh product help" -f -a "odd-cycle" -d 'Odd cycle game on n vertices'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and not __fish_seen_subcommand_from chsh chsh-expression xor odd-cycle magic-square ghz cglmp i3322 chained mermin svetlichny chsh-mod tilted-chsh product help" -f -a "magic-square" -d 'Magic square game'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and not __fish_seen_subcommand_from chsh chsh-expression xor odd-cycle magic-square ghz cglmp i3322 chained mermin svetlichny chsh-mod tilted-chsh product help" -f -a "ghz" -d 'n-player GHZ parity game'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and not __fish_seen_subcommand_from chsh chsh-expression xor odd-cycle magic-square ghz cglmp i3322 chained mermin svetlichny chsh-mod tilted-chsh product help" -f -a "cglmp" -d 'CGLMP expression with d outcomes'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and not __fish_seen_subcommand_from chsh chsh-expression xor odd-cycle magic-square ghz cglmp i3322 chained mermin svetlichny chsh-mod tilted-chsh product help" -f -a "i3322" -d 'I3322 expression (Collins–Gisin form)'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and not __fish_seen_subcommand_from chsh chsh-expression xor odd-cycle magic-square ghz cglmp i3322 chained mermin svetlichny chsh-mod tilted-chsh product help" -f -a "chained" -d 'Chained Bell expression with m settings'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and not __fish_seen_subcommand_from chsh chsh-expression xor odd-cycle magic-square ghz cglmp i3322 chained mermin svetlichny chsh-mod tilted-chsh product help" -f -a "mermin" -d 'Mermin\'s expression for n players (three by default)'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and not __fish_seen_subcommand_from chsh chsh-expression xor odd-cycle magic-square ghz cglmp i3322 chained mermin svetlichny chsh-mod tilted-chsh product help" -f -a "svetlichny" -d 'Svetlichny\'s expression for n players: a violation of 2^(n−1) witnesses genuine multipartite nonlocality'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and not __fish_seen_subcommand_from chsh chsh-expression xor odd-cycle magic-square ghz cglmp i3322 chained mermin svetlichny chsh-mod tilted-chsh product help" -f -a "chsh-mod" -d 'CHSH modulo d: win iff a + b = x·y mod d (questions and answers in 0..d)'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and not __fish_seen_subcommand_from chsh chsh-expression xor odd-cycle magic-square ghz cglmp i3322 chained mermin svetlichny chsh-mod tilted-chsh product help" -f -a "tilted-chsh" -d 'Tilted CHSH expression β⟨A0⟩ + α⟨A0B0⟩ + α⟨A0B1⟩ + ⟨A1B0⟩ − ⟨A1B1⟩'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and not __fish_seen_subcommand_from chsh chsh-expression xor odd-cycle magic-square ghz cglmp i3322 chained mermin svetlichny chsh-mod tilted-chsh product help" -f -a "product" -d 'k-fold parallel repetition of any game file'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and not __fish_seen_subcommand_from chsh chsh-expression xor odd-cycle magic-square ghz cglmp i3322 chained mermin svetlichny chsh-mod tilted-chsh product help" -f -a "help" -d 'Print this message or the help of the given subcommand(s)'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from chsh" -l json -d 'Print the game as JSON (also a valid game file) instead of YAML'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from chsh" -s q -l quiet -d 'No progress output on stderr (accepted for uniformity: `family` has none)'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from chsh" -s h -l help -d 'Print help'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from chsh-expression" -l json -d 'Print the game as JSON (also a valid game file) instead of YAML'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from chsh-expression" -s q -l quiet -d 'No progress output on stderr (accepted for uniformity: `family` has none)'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from chsh-expression" -s h -l help -d 'Print help'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from xor" -l signs -d 'Rows separated by `;`, entries -1, 0 or 1 separated by `,` (e.g. "1,1;1,-1")' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from xor" -l json -d 'Print the game as JSON (also a valid game file) instead of YAML'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from xor" -s q -l quiet -d 'No progress output on stderr (accepted for uniformity: `family` has none)'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from xor" -s h -l help -d 'Print help'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from odd-cycle" -l n -r
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from odd-cycle" -l json -d 'Print the game as JSON (also a valid game file) instead of YAML'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from odd-cycle" -s q -l quiet -d 'No progress output on stderr (accepted for uniformity: `family` has none)'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from odd-cycle" -s h -l help -d 'Print help'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from magic-square" -l json -d 'Print the game as JSON (also a valid game file) instead of YAML'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from magic-square" -s q -l quiet -d 'No progress output on stderr (accepted for uniformity: `family` has none)'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from magic-square" -s h -l help -d 'Print help'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from ghz" -l players -r
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from ghz" -l json -d 'Print the game as JSON (also a valid game file) instead of YAML'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from ghz" -s q -l quiet -d 'No progress output on stderr (accepted for uniformity: `family` has none)'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from ghz" -s h -l help -d 'Print help'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from cglmp" -l d -r
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from cglmp" -l json -d 'Print the game as JSON (also a valid game file) instead of YAML'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from cglmp" -s q -l quiet -d 'No progress output on stderr (accepted for uniformity: `family` has none)'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from cglmp" -s h -l help -d 'Print help'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from i3322" -l json -d 'Print the game as JSON (also a valid game file) instead of YAML'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from i3322" -s q -l quiet -d 'No progress output on stderr (accepted for uniformity: `family` has none)'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from i3322" -s h -l help -d 'Print help'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from chained" -l m -r
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from chained" -l json -d 'Print the game as JSON (also a valid game file) instead of YAML'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from chained" -s q -l quiet -d 'No progress output on stderr (accepted for uniformity: `family` has none)'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from chained" -s h -l help -d 'Print help'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from mermin" -l players -r
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from mermin" -l json -d 'Print the game as JSON (also a valid game file) instead of YAML'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from mermin" -s q -l quiet -d 'No progress output on stderr (accepted for uniformity: `family` has none)'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from mermin" -s h -l help -d 'Print help'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from svetlichny" -l players -r
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from svetlichny" -l json -d 'Print the game as JSON (also a valid game file) instead of YAML'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from svetlichny" -s q -l quiet -d 'No progress output on stderr (accepted for uniformity: `family` has none)'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from svetlichny" -s h -l help -d 'Print help'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from chsh-mod" -l d -r
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from chsh-mod" -l json -d 'Print the game as JSON (also a valid game file) instead of YAML'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from chsh-mod" -s q -l quiet -d 'No progress output on stderr (accepted for uniformity: `family` has none)'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from chsh-mod" -s h -l help -d 'Print help'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from tilted-chsh" -l alpha -r
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from tilted-chsh" -l beta -r
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from tilted-chsh" -l json -d 'Print the game as JSON (also a valid game file) instead of YAML'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from tilted-chsh" -s q -l quiet -d 'No progress output on stderr (accepted for uniformity: `family` has none)'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from tilted-chsh" -s h -l help -d 'Print help'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from product" -l game -d 'The game to repeat' -r -F
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from product" -l rounds -d 'Number of rounds played in parallel' -r
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from product" -l json -d 'Print the game as JSON (also a valid game file) instead of YAML'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from product" -s q -l quiet -d 'No progress output on stderr (accepted for uniformity: `family` has none)'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from product" -s h -l help -d 'Print help'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from help" -f -a "chsh" -d 'CHSH game (win iff a xor b = x·y)'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from help" -f -a "chsh-expression" -d 'CHSH expression in correlators, E00 + E01 + E10 − E11'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from help" -f -a "xor" -d 'XOR game from a sign table'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from help" -f -a "odd-cycle" -d 'Odd cycle game on n vertices'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from help" -f -a "magic-square" -d 'Magic square game'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from help" -f -a "ghz" -d 'n-player GHZ parity game'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from help" -f -a "cglmp" -d 'CGLMP expression with d outcomes'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from help" -f -a "i3322" -d 'I3322 expression (Collins–Gisin form)'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from help" -f -a "chained" -d 'Chained Bell expression with m settings'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from help" -f -a "mermin" -d 'Mermin\'s expression for n players (three by default)'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from help" -f -a "svetlichny" -d 'Svetlichny\'s expression for n players: a violation of 2^(n−1) witnesses genuine multipartite nonlocality'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from help" -f -a "chsh-mod" -d 'CHSH modulo d: win iff a + b = x·y mod d (questions and answers in 0..d)'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from help" -f -a "tilted-chsh" -d 'Tilted CHSH expression β⟨A0⟩ + α⟨A0B0⟩ + α⟨A0B1⟩ + ⟨A1B0⟩ − ⟨A1B1⟩'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from help" -f -a "product" -d 'k-fold parallel repetition of any game file'
complete -c bellgap -n "__fish_bellgap_using_subcommand family; and __fish_seen_subcommand_from help" -f -a "help" -d 'Print this message or the help of the given subcommand(s)'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and not __fish_seen_subcommand_from check classical nosignal bounds npa seesaw evaluate design self-test margin randomness entropy finite-size key review verify local sweep sweep-merge reference family help" -f -a "check" -d 'Validate a game file and print its sizes and cost estimates'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and not __fish_seen_subcommand_from check classical nosignal bounds npa seesaw evaluate design self-test margin randomness entropy finite-size key review verify local sweep sweep-merge reference family help" -f -a "classical" -d 'Exact classical value and an optimal deterministic strategy'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and not __fish_seen_subcommand_from check classical nosignal bounds npa seesaw evaluate design self-test margin randomness entropy finite-size key review verify local sweep sweep-merge reference family help" -f -a "nosignal" -d 'No-signalling value (linear programme)'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and not __fish_seen_subcommand_from check classical nosignal bounds npa seesaw evaluate design self-test margin randomness entropy finite-size key review verify local sweep sweep-merge reference family help" -f -a "bounds" -d 'Every bound available, then the gaps between them'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and not __fish_seen_subcommand_from check classical nosignal bounds npa seesaw evaluate design self-test margin randomness entropy finite-size key review verify local sweep sweep-merge reference family help" -f -a "npa" -d 'Quantum upper bound from the NPA hierarchy, with a verified bound from the dual solution'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and not __fish_seen_subcommand_from check classical nosignal bounds npa seesaw evaluate design self-test margin randomness entropy finite-size key review verify local sweep sweep-merge reference family help" -f -a "seesaw" -d 'Explicit quantum strategy by see-saw: a lower bound on the quantum value'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and not __fish_seen_subcommand_from check classical nosignal bounds npa seesaw evaluate design self-test margin randomness entropy finite-size key review verify local sweep sweep-merge reference family help" -f -a "evaluate" -d 'Recompute a strategy file\'s value by the Born rule and check it; with entanglement, noise and detection-efficiency thresholds'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and not __fish_seen_subcommand_from check classical nosignal bounds npa seesaw evaluate design self-test margin randomness entropy finite-size key review verify local sweep sweep-merge reference family help" -f -a "design" -d 'The best honest implementation under noise (visibility, detection efficiency, dark counts) for a figure, and the least efficiency or visibility at which the figure is positive'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and not __fish_seen_subcommand_from check classical nosignal bounds npa seesaw evaluate design self-test margin randomness entropy finite-size key review verify local sweep sweep-merge reference family help" -f -a "self-test" -d 'Self-testing: a verified lower bound on the fidelity of the devices\' state (extracted by local SWAP isometries) with a target state, from a score, a behaviour or counts (two players, two questions each)'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and not __fish_seen_subcommand_from check classical nosignal bounds npa seesaw evaluate design self-test margin randomness entropy finite-size key review verify local sweep sweep-merge reference family help" -f -a "margin" -d 'What an observed score over n rounds certifies: confidence bounds, margin over the classical value, p-value of classical devices, rounds needed'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and not __fish_seen_subcommand_from check classical nosignal bounds npa seesaw evaluate design self-test margin randomness entropy finite-size key review verify local sweep sweep-merge reference family help" -f -a "randomness" -d 'Certified randomness: the adversary\'s guessing probability and the min-entropy per round at a given score (NPA with the score as a constraint)'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and not __fish_seen_subcommand_from check classical nosignal bounds npa seesaw evaluate design self-test margin randomness entropy finite-size key review verify local sweep sweep-merge reference family help" -f -a "entropy" -d 'A verified lower bound on the conditional von Neumann entropy of a player\'s answer given a quantum adversary, H(A|X=x*, E), at a score or for an observed behaviour (Gauss–Radau hierarchy of NPA relaxations); with the Devetak–Winter key rate when asked'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and not __fish_seen_subcommand_from check classical nosignal bounds npa seesaw evaluate design self-test margin randomness entropy finite-size key review verify local sweep sweep-merge reference family help" -f -a "finite-size" -d 'What a spot-checking run of n rounds certifies, by entropy accumulation: the smooth min-entropy, the certified bits of randomness (or key) and the rate per round, the n at which the rate reaches a fraction of its limit, and the rate against n'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and not __fish_seen_subcommand_from check classical nosignal bounds npa seesaw evaluate design self-test margin randomness entropy finite-size key review verify local sweep sweep-merge reference family help" -f -a "key" -d 'Key figures for CHSH-based device-independent QKD (analytic bound)'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and not __fish_seen_subcommand_from check classical nosignal bounds npa seesaw evaluate design self-test margin randomness entropy finite-size key review verify local sweep sweep-merge reference family help" -f -a "review" -d 'A self-contained review report of a protocol run: bounds, margins, randomness, key figures and the assumptions behind each'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and not __fish_seen_subcommand_from check classical nosignal bounds npa seesaw evaluate design self-test margin randomness entropy finite-size key review verify local sweep sweep-merge reference family help" -f -a "verify" -d 'Re-check an NPA dual certificate without any solver and print the bound it proves'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and not __fish_seen_subcommand_from check classical nosignal bounds npa seesaw evaluate design self-test margin randomness entropy finite-size key review verify local sweep sweep-merge reference family help" -f -a "local" -d 'Decide whether given correlations p(answers|questions) have a local model'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and not __fish_seen_subcommand_from check classical nosignal bounds npa seesaw evaluate design self-test margin randomness entropy finite-size key review verify local sweep sweep-merge reference family help" -f -a "sweep" -d 'Run a list of commands, one per line of a file (e.g. `npa games/chsh.yaml --level 2`, without `bellgap`), and write each one\'s JSON result as a line of JSON Lines; a failing line gives its error object and the others still run. `--shard I/N` runs lines I, I+N, I+2N, ... of the list (counting from 1), so N jobs of a batch scheduler split it; `sweep-merge` joins their outputs'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and not __fish_seen_subcommand_from check classical nosignal bounds npa seesaw evaluate design self-test margin randomness entropy finite-size key review verify local sweep sweep-merge reference family help" -f -a "sweep-merge" -d 'Merge the JSON Lines of a sweep\'s shards into one, in list order, after checking that every line of the list is there exactly once'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and not __fish_seen_subcommand_from check classical nosignal bounds npa seesaw evaluate design self-test margin randomness entropy finite-size key review verify local sweep sweep-merge reference family help" -f -a "reference" -d 'Write the reference pages generated from the command definitions into a folder: a man page per command (`bellgap.1`, `bellgap-npa.1`, ...) and shell completions (`bellgap.bash`, `_bellgap` for zsh, `bellgap.fish`)'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and not __fish_seen_subcommand_from check classical nosignal bounds npa seesaw evaluate design self-test margin randomness entropy finite-size key review verify local sweep sweep-merge reference family help" -f -a "family" -d 'Print a standard game or Bell expression as a game file'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and not __fish_seen_subcommand_from check classical nosignal bounds npa seesaw evaluate design self-test margin randomness entropy finite-size key review verify local sweep sweep-merge reference family help" -f -a "help" -d 'Print this message or the help of the given subcommand(s)'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and __fish_seen_subcommand_from family" -f -a "chsh" -d 'CHSH game (win iff a xor b = x·y)'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and __fish_seen_subcommand_from family" -f -a "chsh-expression" -d 'CHSH expression in correlators, E00 + E01 + E10 − E11'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and __fish_seen_subcommand_from family" -f -a "xor" -d 'XOR game from a sign table'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and __fish_seen_subcommand_from family" -f -a "odd-cycle" -d 'Odd cycle game on n vertices'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and __fish_seen_subcommand_from family" -f -a "magic-square" -d 'Magic square game'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and __fish_seen_subcommand_from family" -f -a "ghz" -d 'n-player GHZ parity game'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and __fish_seen_subcommand_from family" -f -a "cglmp" -d 'CGLMP expression with d outcomes'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and __fish_seen_subcommand_from family" -f -a "i3322" -d 'I3322 expression (Collins–Gisin form)'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and __fish_seen_subcommand_from family" -f -a "chained" -d 'Chained Bell expression with m settings'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and __fish_seen_subcommand_from family" -f -a "mermin" -d 'Mermin\'s expression for n players (three by default)'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and __fish_seen_subcommand_from family" -f -a "svetlichny" -d 'Svetlichny\'s expression for n players: a violation of 2^(n−1) witnesses genuine multipartite nonlocality'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and __fish_seen_subcommand_from family" -f -a "chsh-mod" -d 'CHSH modulo d: win iff a + b = x·y mod d (questions and answers in 0..d)'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and __fish_seen_subcommand_from family" -f -a "tilted-chsh" -d 'Tilted CHSH expression β⟨A0⟩ + α⟨A0B0⟩ + α⟨A0B1⟩ + ⟨A1B0⟩ − ⟨A1B1⟩'
complete -c bellgap -n "__fish_bellgap_using_subcommand help; and __fish_seen_subcommand_from family" -f -a "product" -d 'k-fold parallel repetition of any game file'
