_bellgap() {
    local i cur prev opts cmd
    COMPREPLY=()
    if [[ "${BASH_VERSINFO[0]}" -ge 4 ]]; then
        cur="$2"
    else
        cur="${COMP_WORDS[COMP_CWORD]}"
    fi
    prev="$3"
    cmd=""
    opts=""

    for i in "${COMP_WORDS[@]:0:COMP_CWORD}"
    do
        case "${cmd},${i}" in
            ",$1")
                cmd="bellgap"
                ;;
            bellgap,bounds)
                cmd="bellgap__subcmd__bounds"
                ;;
            bellgap,check)
                cmd="bellgap__subcmd__check"
                ;;
            bellgap,classical)
                cmd="bellgap__subcmd__classical"
                ;;
            bellgap,design)
                cmd="bellgap__subcmd__design"
                ;;
            bellgap,entropy)
                cmd="bellgap__subcmd__entropy"
                ;;
            bellgap,evaluate)
                cmd="bellgap__subcmd__evaluate"
                ;;
            bellgap,family)
                cmd="bellgap__subcmd__family"
                ;;
            bellgap,finite-size)
                cmd="bellgap__subcmd__finite__subcmd__size"
                ;;
            bellgap,help)
                cmd="bellgap__subcmd__help"
                ;;
            bellgap,key)
                cmd="bellgap__subcmd__key"
                ;;
            bellgap,local)
                cmd="bellgap__subcmd__local"
                ;;
            bellgap,margin)
                cmd="bellgap__subcmd__margin"
                ;;
            bellgap,nosignal)
                cmd="bellgap__subcmd__nosignal"
                ;;
            bellgap,npa)
                cmd="bellgap__subcmd__npa"
                ;;
            bellgap,randomness)
                cmd="bellgap__subcmd__randomness"
                ;;
            bellgap,reference)
                cmd="bellgap__subcmd__reference"
                ;;
            bellgap,review)
                cmd="bellgap__subcmd__review"
                ;;
            bellgap,seesaw)
                cmd="bellgap__subcmd__seesaw"
                ;;
            bellgap,self-test)
                cmd="bellgap__subcmd__self__subcmd__test"
                ;;
            bellgap,sweep)
                cmd="bellgap__subcmd__sweep"
                ;;
            bellgap,sweep-merge)
                cmd="bellgap__subcmd__sweep__subcmd__merge"
                ;;
            bellgap,verify)
                cmd="bellgap__subcmd__verify"
                ;;
            bellgap__subcmd__family,cglmp)
                cmd="bellgap__subcmd__family__subcmd__cglmp"
                ;;
            bellgap__subcmd__family,chained)
                cmd="bellgap__subcmd__family__subcmd__chained"
                ;;
            bellgap__subcmd__family,chsh)
                cmd="bellgap__subcmd__family__subcmd__chsh"
                ;;
            bellgap__subcmd__family,chsh-expression)
                cmd="bellgap__subcmd__family__subcmd__chsh__subcmd__expression"
                ;;
            bellgap__subcmd__family,chsh-mod)
                cmd="bellgap__subcmd__family__subcmd__chsh__subcmd__mod"
                ;;
            bellgap__subcmd__family,ghz)
                cmd="bellgap__subcmd__family__subcmd__ghz"
                ;;
            bellgap__subcmd__family,help)
                cmd="bellgap__subcmd__family__subcmd__help"
                ;;
            bellgap__subcmd__family,i3322)
                cmd="bellgap__subcmd__family__subcmd__i3322"
                ;;
            bellgap__subcmd__family,magic-square)
                cmd="bellgap__subcmd__family__subcmd__magic__subcmd__square"
                ;;
            bellgap__subcmd__family,mermin)
                cmd="bellgap__subcmd__family__subcmd__mermin"
                ;;
            bellgap__subcmd__family,odd-cycle)
                cmd="bellgap__subcmd__family__subcmd__odd__subcmd__cycle"
                ;;
            bellgap__subcmd__family,product)
                cmd="bellgap__subcmd__family__subcmd__product"
                ;;
            bellgap__subcmd__family,svetlichny)
                cmd="bellgap__subcmd__family__subcmd__svetlichny"
                ;;
            bellgap__subcmd__family,tilted-chsh)
                cmd="bellgap__subcmd__family__subcmd__tilted__subcmd__chsh"
                ;;
            bellgap__subcmd__family,xor)
                cmd="bellgap__subcmd__family__subcmd__xor"
                ;;
            bellgap__subcmd__family__subcmd__help,cglmp)
                cmd="bellgap__subcmd__family__subcmd__help__subcmd__cglmp"
                ;;
            bellgap__subcmd__family__subcmd__help,chained)
                cmd="bellgap__subcmd__family__subcmd__help__subcmd__chained"
                ;;
            bellgap__subcmd__family__subcmd__help,chsh)
                cmd="bellgap__subcmd__family__subcmd__help__subcmd__chsh"
                ;;
            bellgap__subcmd__family__subcmd__help,chsh-expression)
                cmd="bellgap__subcmd__family__subcmd__help__subcmd__chsh__subcmd__expression"
                ;;
            bellgap__subcmd__family__subcmd__help,chsh-mod)
                cmd="bellgap__subcmd__family__subcmd__help__subcmd__chsh__subcmd__mod"
                ;;
            bellgap__subcmd__family__subcmd__help,ghz)
                cmd="bellgap__subcmd__family__subcmd__help__subcmd__ghz"
                ;;
            bellgap__subcmd__family__subcmd__help,help)
                cmd="bellgap__subcmd__family__subcmd__help__subcmd__help"
                ;;
            bellgap__subcmd__family__subcmd__help,i3322)
                cmd="bellgap__subcmd__family__subcmd__help__subcmd__i3322"
                ;;
            bellgap__subcmd__family__subcmd__help,magic-square)
                cmd="bellgap__subcmd__family__subcmd__help__subcmd__magic__subcmd__square"
                ;;
            bellgap__subcmd__family__subcmd__help,mermin)
                cmd="bellgap__subcmd__family__subcmd__help__subcmd__mermin"
                ;;
            bellgap__subcmd__family__subcmd__help,odd-cycle)
                cmd="bellgap__subcmd__family__subcmd__help__subcmd__odd__subcmd__cycle"
                ;;
            bellgap__subcmd__family__subcmd__help,product)
                cmd="bellgap__subcmd__family__subcmd__help__subcmd__product"
                ;;
            bellgap__subcmd__family__subcmd__help,svetlichny)
                cmd="bellgap__subcmd__family__subcmd__help__subcmd__svetlichny"
                ;;
            bellgap__subcmd__family__subcmd__help,tilted-chsh)
                cmd="bellgap__subcmd__family__subcmd__help__subcmd__tilted__subcmd__chsh"
                ;;
            bellgap__subcmd__family__subcmd__help,xor)
                cmd="bellgap__subcmd__family__subcmd__help__subcmd__xor"
                ;;
            bellgap__subcmd__help,bounds)
                cmd="bellgap__subcmd__help__subcmd__bounds"
                ;;
            bellgap__subcmd__help,check)
                cmd="bellgap__subcmd__help__subcmd__check"
                ;;
            bellgap__subcmd__help,classical)
                cmd="bellgap__subcmd__help__subcmd__classical"
                ;;
            bellgap__subcmd__help,design)
                cmd="bellgap__subcmd__help__subcmd__design"
                ;;
            bellgap__subcmd__help,entropy)
                cmd="bellgap__subcmd__help__subcmd__entropy"
                ;;
            bellgap__subcmd__help,evaluate)
                cmd="bellgap__subcmd__help__subcmd__evaluate"
                ;;
            bellgap__subcmd__help,family)
                cmd="bellgap__subcmd__help__subcmd__family"
                ;;
            bellgap__subcmd__help,finite-size)
                cmd="bellgap__subcmd__help__subcmd__finite__subcmd__size"
                ;;
            bellgap__subcmd__help,help)
                cmd="bellgap__subcmd__help__subcmd__help"
                ;;
            bellgap__subcmd__help,key)
                cmd="bellgap__subcmd__help__subcmd__key"
                ;;
            bellgap__subcmd__help,local)
                cmd="bellgap__subcmd__help__subcmd__local"
                ;;
            bellgap__subcmd__help,margin)
                cmd="bellgap__subcmd__help__subcmd__margin"
                ;;
            bellgap__subcmd__help,nosignal)
                cmd="bellgap__subcmd__help__subcmd__nosignal"
                ;;
            bellgap__subcmd__help,npa)
                cmd="bellgap__subcmd__help__subcmd__npa"
                ;;
            bellgap__subcmd__help,randomness)
                cmd="bellgap__subcmd__help__subcmd__randomness"
                ;;
            bellgap__subcmd__help,reference)
                cmd="bellgap__subcmd__help__subcmd__reference"
                ;;
            bellgap__subcmd__help,review)
                cmd="bellgap__subcmd__help__subcmd__review"
                ;;
            bellgap__subcmd__help,seesaw)
                cmd="bellgap__subcmd__help__subcmd__seesaw"
                ;;
            bellgap__subcmd__help,self-test)
                cmd="bellgap__subcmd__help__subcmd__self__subcmd__test"
                ;;
            bellgap__subcmd__help,sweep)
                cmd="bellgap__subcmd__help__subcmd__sweep"
                ;;
            bellgap__subcmd__help,sweep-merge)
                cmd="bellgap__subcmd__help__subcmd__sweep__subcmd__merge"
                ;;
            bellgap__subcmd__help,verify)
                cmd="bellgap__subcmd__help__subcmd__verify"
                ;;
            bellgap__subcmd__help__subcmd__family,cglmp)
                cmd="bellgap__subcmd__help__subcmd__family__subcmd__cglmp"
                ;;
            bellgap__subcmd__help__subcmd__family,chained)
                cmd="bellgap__subcmd__help__subcmd__family__subcmd__chained"
                ;;
            bellgap__subcmd__help__subcmd__family,chsh)
                cmd="bellgap__subcmd__help__subcmd__family__subcmd__chsh"
                ;;
            bellgap__subcmd__help__subcmd__family,chsh-expression)
                cmd="bellgap__subcmd__help__subcmd__family__subcmd__chsh__subcmd__expression"
                ;;
            bellgap__subcmd__help__subcmd__family,chsh-mod)
                cmd="bellgap__subcmd__help__subcmd__family__subcmd__chsh__subcmd__mod"
                ;;
            bellgap__subcmd__help__subcmd__family,ghz)
                cmd="bellgap__subcmd__help__subcmd__family__subcmd__ghz"
                ;;
            bellgap__subcmd__help__subcmd__family,i3322)
                cmd="bellgap__subcmd__help__subcmd__family__subcmd__i3322"
                ;;
            bellgap__subcmd__help__subcmd__family,magic-square)
                cmd="bellgap__subcmd__help__subcmd__family__subcmd__magic__subcmd__square"
                ;;
            bellgap__subcmd__help__subcmd__family,mermin)
                cmd="bellgap__subcmd__help__subcmd__family__subcmd__mermin"
                ;;
            bellgap__subcmd__help__subcmd__family,odd-cycle)
                cmd="bellgap__subcmd__help__subcmd__family__subcmd__odd__subcmd__cycle"
                ;;
            bellgap__subcmd__help__subcmd__family,product)
                cmd="bellgap__subcmd__help__subcmd__family__subcmd__product"
                ;;
            bellgap__subcmd__help__subcmd__family,svetlichny)
                cmd="bellgap__subcmd__help__subcmd__family__subcmd__svetlichny"
                ;;
            bellgap__subcmd__help__subcmd__family,tilted-chsh)
                cmd="bellgap__subcmd__help__subcmd__family__subcmd__tilted__subcmd__chsh"
                ;;
            bellgap__subcmd__help__subcmd__family,xor)
                cmd="bellgap__subcmd__help__subcmd__family__subcmd__xor"
                ;;
            *)
                ;;
        esac
    done

    case "${cmd}" in
        bellgap)
            opts="-h -V --help --version check classical nosignal bounds npa seesaw evaluate design self-test margin randomness entropy finite-size key review verify local sweep sweep-merge reference family help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 1 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__bounds)
            opts="-q -h --json --quiet --force --allow-large --level --solver --symmetry --budget --skip --json-lines --table --dim --dims --restarts --seed --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 2 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                --level)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --solver)
                    COMPREPLY=($(compgen -W "auto ipm clarabel first-order" -- "${cur}"))
                    return 0
                    ;;
                --symmetry)
                    COMPREPLY=($(compgen -W "auto off" -- "${cur}"))
                    return 0
                    ;;
                --budget)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --skip)
                    COMPREPLY=($(compgen -W "classical no-signalling npa seesaw" -- "${cur}"))
                    return 0
                    ;;
                --table)
                    COMPREPLY=($(compgen -W "csv latex" -- "${cur}"))
                    return 0
                    ;;
                --dim)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --dims)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --restarts)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --seed)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__check)
            opts="-q -h --json --quiet --force --allow-large --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 2 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__classical)
            opts="-q -h --json --quiet --force --allow-large --method --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 2 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                --method)
                    COMPREPLY=($(compgen -W "auto search milp" -- "${cur}"))
                    return 0
                    ;;
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__design)
            opts="-q -h --json --quiet --force --allow-large --figure --efficiency --visibility --dark-counts --no-click --state --threshold --tolerance --curve-points --player --question --key-with --key-question --randomness-level --nodes --level --adversary-words --moments --solver --noisy-preprocessing --symmetry --dim --dims --restarts --seed --save --svg --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 2 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                --figure)
                    COMPREPLY=($(compgen -W "margin min-entropy entropy key-rate" -- "${cur}"))
                    return 0
                    ;;
                --efficiency)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --visibility)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --dark-counts)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --no-click)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --state)
                    COMPREPLY=($(compgen -W "optimised maximally-entangled" -- "${cur}"))
                    return 0
                    ;;
                --threshold)
                    COMPREPLY=($(compgen -W "efficiency visibility" -- "${cur}"))
                    return 0
                    ;;
                --tolerance)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --curve-points)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --player)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --question)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --key-with)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --key-question)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --randomness-level)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --nodes)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --level)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --adversary-words)
                    COMPREPLY=($(compgen -W "letters with-projectors with-player-words with-pairs" -- "${cur}"))
                    return 0
                    ;;
                --moments)
                    COMPREPLY=($(compgen -W "real complex" -- "${cur}"))
                    return 0
                    ;;
                --solver)
                    COMPREPLY=($(compgen -W "auto ipm clarabel" -- "${cur}"))
                    return 0
                    ;;
                --noisy-preprocessing)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --symmetry)
                    COMPREPLY=($(compgen -W "auto off" -- "${cur}"))
                    return 0
                    ;;
                --dim)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --dims)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --restarts)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --seed)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --save)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --svg)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__entropy)
            opts="-q -h --json --quiet --force --allow-large --score --sweep --behaviour --counts --alpha --strategy --player --question --with --with-question --nodes --level --adversary-words --moments --solver --noisy-preprocessing --symmetry --key-with --key-question --error-rate --sdpa --sdpa-solutions --exact --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 2 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                --score)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --sweep)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --behaviour)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --counts)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --alpha)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --strategy)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --player)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --question)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --with)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --with-question)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --nodes)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --level)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --adversary-words)
                    COMPREPLY=($(compgen -W "letters with-projectors with-player-words with-pairs" -- "${cur}"))
                    return 0
                    ;;
                --moments)
                    COMPREPLY=($(compgen -W "real complex" -- "${cur}"))
                    return 0
                    ;;
                --solver)
                    COMPREPLY=($(compgen -W "auto ipm clarabel" -- "${cur}"))
                    return 0
                    ;;
                --noisy-preprocessing)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --symmetry)
                    COMPREPLY=($(compgen -W "auto off" -- "${cur}"))
                    return 0
                    ;;
                --key-with)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --key-question)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --error-rate)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --sdpa)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --sdpa-solutions)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__evaluate)
            opts="-q -h --json --quiet --force --allow-large --svg --no-classical --normalise --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 2 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                --svg)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__family)
            opts="-q -h --json --quiet --help chsh chsh-expression xor odd-cycle magic-square ghz cglmp i3322 chained mermin svetlichny chsh-mod tilted-chsh product help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 2 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__family__subcmd__cglmp)
            opts="-q -h --d --json --quiet --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                --d)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__family__subcmd__chained)
            opts="-q -h --m --json --quiet --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                --m)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__family__subcmd__chsh)
            opts="-q -h --json --quiet --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__family__subcmd__chsh__subcmd__expression)
            opts="-q -h --json --quiet --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__family__subcmd__chsh__subcmd__mod)
            opts="-q -h --d --json --quiet --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                --d)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__family__subcmd__ghz)
            opts="-q -h --players --json --quiet --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                --players)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__family__subcmd__help)
            opts="chsh chsh-expression xor odd-cycle magic-square ghz cglmp i3322 chained mermin svetlichny chsh-mod tilted-chsh product help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__family__subcmd__help__subcmd__cglmp)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 4 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__family__subcmd__help__subcmd__chained)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 4 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__family__subcmd__help__subcmd__chsh)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 4 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__family__subcmd__help__subcmd__chsh__subcmd__expression)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 4 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__family__subcmd__help__subcmd__chsh__subcmd__mod)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 4 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__family__subcmd__help__subcmd__ghz)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 4 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__family__subcmd__help__subcmd__help)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 4 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__family__subcmd__help__subcmd__i3322)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 4 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__family__subcmd__help__subcmd__magic__subcmd__square)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 4 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__family__subcmd__help__subcmd__mermin)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 4 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__family__subcmd__help__subcmd__odd__subcmd__cycle)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 4 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__family__subcmd__help__subcmd__product)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 4 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__family__subcmd__help__subcmd__svetlichny)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 4 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__family__subcmd__help__subcmd__tilted__subcmd__chsh)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 4 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__family__subcmd__help__subcmd__xor)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 4 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__family__subcmd__i3322)
            opts="-q -h --json --quiet --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__family__subcmd__magic__subcmd__square)
            opts="-q -h --json --quiet --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__family__subcmd__mermin)
            opts="-q -h --players --json --quiet --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                --players)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__family__subcmd__odd__subcmd__cycle)
            opts="-q -h --n --json --quiet --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                --n)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__family__subcmd__product)
            opts="-q -h --game --rounds --json --quiet --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                --game)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --rounds)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__family__subcmd__svetlichny)
            opts="-q -h --players --json --quiet --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                --players)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__family__subcmd__tilted__subcmd__chsh)
            opts="-q -h --alpha --beta --json --quiet --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                --alpha)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --beta)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__family__subcmd__xor)
            opts="-q -h --signs --json --quiet --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                --signs)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__finite__subcmd__size)
            opts="-q -h --json --quiet --force --allow-large --rounds --testing --threshold --expected --smoothing --pass-floor --extractor-error --fraction --key-disclosed-bits --key-error-rate --ec-efficiency --verification-error --correction-failure --max-test-rounds --statement --tangent --tangent-points --player --question --with --with-question --nodes --level --adversary-words --moments --solver --noisy-preprocessing --symmetry --svg --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 2 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                --rounds)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --testing)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --threshold)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --expected)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --smoothing)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --pass-floor)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --extractor-error)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --fraction)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --key-disclosed-bits)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --key-error-rate)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --ec-efficiency)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --verification-error)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --correction-failure)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --max-test-rounds)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --statement)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --tangent)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --tangent-points)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --player)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --question)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --with)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --with-question)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --nodes)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --level)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --adversary-words)
                    COMPREPLY=($(compgen -W "letters with-projectors with-player-words with-pairs" -- "${cur}"))
                    return 0
                    ;;
                --moments)
                    COMPREPLY=($(compgen -W "real complex" -- "${cur}"))
                    return 0
                    ;;
                --solver)
                    COMPREPLY=($(compgen -W "auto ipm clarabel" -- "${cur}"))
                    return 0
                    ;;
                --noisy-preprocessing)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --symmetry)
                    COMPREPLY=($(compgen -W "auto off" -- "${cur}"))
                    return 0
                    ;;
                --svg)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help)
            opts="check classical nosignal bounds npa seesaw evaluate design self-test margin randomness entropy finite-size key review verify local sweep sweep-merge reference family help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 2 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__bounds)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__check)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__classical)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__design)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__entropy)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__evaluate)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__family)
            opts="chsh chsh-expression xor odd-cycle magic-square ghz cglmp i3322 chained mermin svetlichny chsh-mod tilted-chsh product"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__family__subcmd__cglmp)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 4 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__family__subcmd__chained)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 4 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__family__subcmd__chsh)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 4 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__family__subcmd__chsh__subcmd__expression)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 4 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__family__subcmd__chsh__subcmd__mod)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 4 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__family__subcmd__ghz)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 4 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__family__subcmd__i3322)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 4 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__family__subcmd__magic__subcmd__square)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 4 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__family__subcmd__mermin)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 4 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__family__subcmd__odd__subcmd__cycle)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 4 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__family__subcmd__product)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 4 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__family__subcmd__svetlichny)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 4 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__family__subcmd__tilted__subcmd__chsh)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 4 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__family__subcmd__xor)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 4 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__finite__subcmd__size)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__help)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__key)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__local)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__margin)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__nosignal)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__npa)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__randomness)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__reference)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__review)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__seesaw)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__self__subcmd__test)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__sweep)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__sweep__subcmd__merge)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__help__subcmd__verify)
            opts=""
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 3 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__key)
            opts="-q -h --chsh --qber --noisy-preprocessing --json --quiet --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 2 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                --chsh)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --qber)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --noisy-preprocessing)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__local)
            opts="-q -h --counts --save --force --json --quiet --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 2 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                --save)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__margin)
            opts="-q -h --json --quiet --force --allow-large --rounds --counts --wins --score-sum --score-range --alpha --target-p-value --expected --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 2 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                --rounds)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --counts)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --wins)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --score-sum)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --score-range)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --alpha)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --target-p-value)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --expected)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__nosignal)
            opts="-q -h --json --quiet --force --allow-large --save --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 2 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                --save)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__npa)
            opts="-q -h --json --quiet --force --allow-large --level --certificate --exact-certificate --table --sdpa --svg --solver --symmetry --budget --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 2 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                --level)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --certificate)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --exact-certificate)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --table)
                    COMPREPLY=($(compgen -W "csv latex" -- "${cur}"))
                    return 0
                    ;;
                --sdpa)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --svg)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --solver)
                    COMPREPLY=($(compgen -W "auto ipm clarabel first-order" -- "${cur}"))
                    return 0
                    ;;
                --symmetry)
                    COMPREPLY=($(compgen -W "auto off" -- "${cur}"))
                    return 0
                    ;;
                --budget)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__randomness)
            opts="-q -h --json --quiet --force --allow-large --score --sweep --counts --alpha --player --question --with --with-question --level --svg --exact --sdpa --sdpa-solution --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 2 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                --score)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --sweep)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --counts)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --alpha)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --player)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --question)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --with)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --with-question)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --level)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --svg)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --sdpa)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --sdpa-solution)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__reference)
            opts="-q -h --json --quiet --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 2 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__review)
            opts="-o -q -h --markdown --output --json --quiet --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 2 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                --output)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                -o)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__seesaw)
            opts="-q -h --json --quiet --force --allow-large --dim --dims --restarts --seed --save --svg --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 2 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                --dim)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --dims)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --restarts)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --seed)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --save)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --svg)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__self__subcmd__test)
            opts="-q -h --json --quiet --force --allow-large --score --behaviour --counts --alpha --target --strategy --questions --level --dim --dims --restarts --seed --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 2 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                --score)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --behaviour)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --counts)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --alpha)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --target)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --strategy)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --questions)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --level)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --dim)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --dims)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --restarts)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --seed)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__sweep)
            opts="-o -q -h --shard --output --json --quiet --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 2 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                --shard)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                --output)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                -o)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__sweep__subcmd__merge)
            opts="-o -q -h --output --json --quiet --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 2 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                --output)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                -o)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
        bellgap__subcmd__verify)
            opts="-q -h --json --quiet --force --allow-large --exact --sdpa-level --help"
            if [[ ${cur} == -* || ${COMP_CWORD} -eq 2 ]] ; then
                COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
                return 0
            fi
            case "${prev}" in
                --sdpa-level)
                    COMPREPLY=($(compgen -f "${cur}"))
                    return 0
                    ;;
                *)
                    COMPREPLY=()
                    ;;
            esac
            COMPREPLY=( $(compgen -W "${opts}" -- "${cur}") )
            return 0
            ;;
    esac
}

if [[ "${BASH_VERSINFO[0]}" -eq 4 && "${BASH_VERSINFO[1]}" -ge 4 || "${BASH_VERSINFO[0]}" -gt 4 ]]; then
    complete -F _bellgap -o nosort -o bashdefault -o default bellgap
else
    complete -F _bellgap -o bashdefault -o default bellgap
fi
