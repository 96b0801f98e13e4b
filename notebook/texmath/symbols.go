package texmath

// Tables of the commands the parser knows. Each table maps a command name
// (without the backslash) to the Unicode character it stands for.

// greek holds the Greek letters. Capitals are drawn upright, as in TeX.
var greek = map[string]string{
	"alpha": "α", "beta": "β", "gamma": "γ", "delta": "δ", "epsilon": "ϵ",
	"varepsilon": "ε", "zeta": "ζ", "eta": "η", "theta": "θ", "vartheta": "ϑ",
	"iota": "ι", "kappa": "κ", "lambda": "λ", "mu": "μ", "nu": "ν", "xi": "ξ",
	"pi": "π", "varpi": "ϖ", "rho": "ρ", "varrho": "ϱ", "sigma": "σ",
	"varsigma": "ς", "tau": "τ", "upsilon": "υ", "phi": "ϕ", "varphi": "φ",
	"chi": "χ", "psi": "ψ", "omega": "ω",
	"Gamma": "Γ", "Delta": "Δ", "Theta": "Θ", "Lambda": "Λ", "Xi": "Ξ",
	"Pi": "Π", "Sigma": "Σ", "Upsilon": "Υ", "Phi": "Φ", "Psi": "Ψ", "Omega": "Ω",
}

// ordinary holds symbols that behave like letters (no operator spacing).
var ordinary = map[string]string{
	"nabla": "∇", "partial": "∂", "infty": "∞", "ell": "ℓ", "hbar": "ℏ",
	"emptyset": "∅", "varnothing": "∅", "prime": "′", "forall": "∀",
	"exists": "∃", "neg": "¬", "lnot": "¬", "aleph": "ℵ", "Re": "ℜ", "Im": "ℑ",
	"top": "⊤", "bot": "⊥", "angle": "∠", "triangle": "△", "imath": "ı",
	"jmath": "ȷ", "wp": "℘", "%": "%", "#": "#", "&": "&", "$": "$", "_": "_",
}

// operators holds binary operators, relations, arrows and punctuation.
var operators = map[string]string{
	"cdot": "⋅", "times": "×", "div": "÷", "pm": "±", "mp": "∓", "ast": "∗",
	"star": "⋆", "circ": "∘", "bullet": "∙", "oplus": "⊕", "ominus": "⊖",
	"otimes": "⊗", "odot": "⊙", "cup": "∪", "cap": "∩", "setminus": "∖",
	"wedge": "∧", "land": "∧", "vee": "∨", "lor": "∨", "sqcup": "⊔", "sqcap": "⊓",
	"le": "≤", "leq": "≤", "ge": "≥", "geq": "≥", "leqslant": "⩽", "geqslant": "⩾",
	"ne": "≠", "neq": "≠", "approx": "≈", "sim": "∼", "simeq": "≃", "cong": "≅",
	"equiv": "≡", "propto": "∝", "ll": "≪", "gg": "≫", "lesssim": "≲",
	"gtrsim": "≳", "prec": "≺", "succ": "≻", "preceq": "⪯", "succeq": "⪰",
	"in": "∈", "notin": "∉", "ni": "∋", "subset": "⊂", "supset": "⊃",
	"subseteq": "⊆", "supseteq": "⊇", "subsetneq": "⊊", "perp": "⊥",
	"parallel": "∥", "mid": "∣", "nmid": "∤", "colon": ":", "coloneqq": "≔",
	"to": "→", "rightarrow": "→", "leftarrow": "←", "gets": "←",
	"leftrightarrow": "↔", "Rightarrow": "⇒", "Leftarrow": "⇐",
	"Leftrightarrow": "⇔", "implies": "⟹", "impliedby": "⟸", "iff": "⟺",
	"mapsto": "↦", "longrightarrow": "⟶", "longmapsto": "⟼", "uparrow": "↑",
	"downarrow": "↓", "rightharpoonup": "⇀", "hookrightarrow": "↪",
	"ldots": "…", "dots": "…", "cdots": "⋯", "vdots": "⋮", "ddots": "⋱",
	"{": "{", "}": "}", "lbrace": "{", "rbrace": "}", "|": "‖", "Vert": "‖",
	"vert": "|", "langle": "⟨", "rangle": "⟩", "lfloor": "⌊", "rfloor": "⌋",
	"lceil": "⌈", "rceil": "⌉", "lvert": "|", "rvert": "|", "lVert": "‖",
	"rVert": "‖", "backslash": "∖",
}

// delimiters lists what may follow \left, \right, \middle and \big.
var delimiters = map[string]string{
	"(": "(", ")": ")", "[": "[", "]": "]", "|": "|", "/": "/", ".": "",
	"<": "⟨", ">": "⟩",
	`\{`: "{", `\}`: "}", `\lbrace`: "{", `\rbrace`: "}", `\|`: "‖",
	`\Vert`: "‖", `\vert`: "|", `\lvert`: "|", `\rvert`: "|", `\lVert`: "‖",
	`\rVert`: "‖", `\langle`: "⟨", `\rangle`: "⟩", `\lfloor`: "⌊",
	`\rfloor`: "⌋", `\lceil`: "⌈", `\rceil`: "⌉", `\uparrow`: "↑",
	`\downarrow`: "↓", `\backslash`: "∖",
}

// bigSizes gives the fixed heights of \big ... \Bigg, in em.
var bigSizes = map[string]string{
	"big": "1.2em", "Big": "1.8em", "bigg": "2.4em", "Bigg": "3em",
}

// largeOps are operators drawn larger in display style. limits tells
// whether their scripts go under and over them in display style (sums) or
// beside them (integrals), as in TeX.
var largeOps = map[string]struct {
	char   string
	limits bool
}{
	"sum": {"∑", true}, "prod": {"∏", true}, "coprod": {"∐", true},
	"bigcup": {"⋃", true}, "bigcap": {"⋂", true}, "bigoplus": {"⨁", true},
	"bigotimes": {"⨂", true}, "bigvee": {"⋁", true}, "bigwedge": {"⋀", true},
	"int": {"∫", false}, "iint": {"∬", false}, "iiint": {"∭", false},
	"oint": {"∮", false},
}

// functions are named operators set upright. The value tells whether
// their scripts go under them in display style (\lim) or beside (\log).
var functions = map[string]bool{
	"lim": true, "liminf": true, "limsup": true, "sup": true, "inf": true,
	"max": true, "min": true, "det": true, "gcd": true, "Pr": true,
	"esssup": true, "essinf": true, "argmin": true, "argmax": true,
	"log": false, "ln": false, "exp": false, "lg": false, "sin": false,
	"cos": false, "tan": false, "cot": false, "sec": false, "csc": false,
	"sinh": false, "cosh": false, "tanh": false, "coth": false, "arcsin": false,
	"arccos": false, "arctan": false, "arg": false, "deg": false, "dim": false,
	"ker": false, "hom": false, "sgn": false, "tr": false,
	"curl": false, "diam": false, "dist": false, "supp": false, "meas": false,
}

// functionText spells the functions whose name is not their command.
var functionText = map[string]string{
	"liminf": "lim inf", "limsup": "lim sup", "esssup": "ess sup",
	"essinf": "ess inf", "argmin": "arg min", "argmax": "arg max",
}

// accents maps accent commands to the mark placed over (or under) the base.
var accents = map[string]struct {
	mark    string
	stretch bool
	under   bool
}{
	"hat": {"^", false, false}, "widehat": {"^", true, false},
	"tilde": {"~", false, false}, "widetilde": {"~", true, false},
	"bar": {"¯", false, false}, "overline": {"‾", true, false},
	"underline": {"_", true, true}, "dot": {"˙", false, false},
	"ddot": {"¨", false, false}, "vec": {"→", false, false},
	"check": {"ˇ", false, false}, "breve": {"˘", false, false},
	"acute": {"´", false, false}, "grave": {"`", false, false},
	"overrightarrow": {"→", true, false}, "overbrace": {"⏞", true, false},
	"underbrace": {"⏟", true, true},
}

// spaces are the horizontal spacing commands, in em (TeX's 3, 4, 5 mu and quads).
var spaces = map[string]string{
	",": "0.1667em", "thinspace": "0.1667em", ":": "0.2222em", ">": "0.2222em",
	"medspace": "0.2222em", ";": "0.2778em", "thickspace": "0.2778em",
	" ": "0.25em", "quad": "1em", "qquad": "2em", "enspace": "0.5em",
}

// fonts maps font commands to the variant they select.
var fonts = map[string]variant{
	"mathrm": vUpright, "mathup": vUpright, "mathit": vItalic, "mathbf": vBold,
	"boldsymbol": vBoldItalic, "bm": vBoldItalic, "mathcal": vScript,
	"mathscr": vScript, "mathbb": vDouble, "mathsf": vSans, "mathtt": vMono,
	"mathfrak": vFraktur,
}

// environments maps environment names to their table layout.
var environments = map[string]struct {
	open, close string // fences around the table ("" for none)
	align       string // column alignment: "rl" alternates, "l" left, "c" centre
	display     bool   // cells in display style
}{
	"aligned": {"", "", "rl", true}, "align": {"", "", "rl", true},
	"align*": {"", "", "rl", true}, "split": {"", "", "rl", true},
	"gathered": {"", "", "c", true}, "gather": {"", "", "c", true},
	"gather*": {"", "", "c", true},
	"cases":   {"{", "", "l", false}, "dcases": {"{", "", "l", true},
	"matrix": {"", "", "c", false}, "pmatrix": {"(", ")", "c", false},
	"bmatrix": {"[", "]", "c", false}, "Bmatrix": {"{", "}", "c", false},
	"vmatrix": {"|", "|", "c", false}, "Vmatrix": {"‖", "‖", "c", false},
	"array": {"", "", "c", false}, "smallmatrix": {"", "", "c", false},
}
