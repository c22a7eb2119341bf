# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
"""The shape of the tree, checked (DESIGN.md "the one rule"; issue: one library, a thin program).

1. src/cli includes neither GSL nor SQLite headers nor the library's internal ones; no cmd_X.c calls a function defined in
   another cmd_Y.c; src/cli has no mutable static state (static variables that are not const);
   no file outside src/lib/model/ names a kind of model (BG_MODEL_SH3 ...).
2. No function in src/ is over 100 lines or takes more than 8 parameters, unless the comment
   just above it says "Long on purpose:" and why (numerical kernels).
3. libbandgap.so exports exactly the functions declared BG_API in include/bandgap/.

What still breaks a rule while the restructuring is under way is listed, one key a line, in
tests/layout-debt.txt (the keys are printed with each problem); a listed key that no longer
offends is an error too, so the list only shrinks.  Prints "ok NAME" / "not ok NAME" lines.  Usage: layout.py BUILD_DIR
"""
import os
import re
import subprocess
import sys

MAX_LINES = 100
MAX_PARAMS = 8


def sources(root):
    for d, _, files in os.walk(root):
        for f in sorted(files):
            if f.endswith(('.c', '.h')):
                yield os.path.join(d, f)


def strip_comments(text):
    """Blank out comments and string/char literals, keeping line breaks."""
    out, i, n = [], 0, len(text)
    while i < n:
        c = text[i]
        if text.startswith('/*', i):
            j = text.find('*/', i + 2)
            j = n if j < 0 else j + 2
            out.append(re.sub(r'[^\n]', ' ', text[i:j]))
            i = j
        elif text.startswith('//', i):
            j = text.find('\n', i)
            j = n if j < 0 else j
            out.append(' ' * (j - i))
            i = j
        elif c in '"\'':
            j = i + 1
            while j < n and text[j] != c:
                j += 2 if text[j] == '\\' else 1
            out.append(c + re.sub(r'[^\n]', ' ', text[i + 1:j]) + c)
            i = j + 1
        else:
            out.append(c)
            i += 1
    return ''.join(out)


def functions(path):
    """(name, first line, number of lines, number of parameters, comment above) of each
    function defined at file scope; the code style puts the opening brace alone in column 0."""
    raw = open(path, encoding='utf-8').read()
    code = strip_comments(raw)
    lines = code.split('\n')
    raw_lines = raw.split('\n')
    found = []
    for i, line in enumerate(lines):
        if line != '{':
            continue
        # the signature: back to the line that starts in column 0
        j = i - 1
        while j >= 0 and (lines[j].startswith((' ', '\t')) or lines[j] == ''):
            j -= 1
        sig = ' '.join(l.strip() for l in lines[j:i])
        m = re.search(r'(\w+)\s*\((.*)\)\s*$', sig)
        if not m or re.match(r'(struct|enum|union|typedef)\b', sig) or '=' in sig.split('(')[0]:
            continue
        name, params = m.group(1), m.group(2).strip()
        depth, nparams = 0, (0 if params in ('', 'void') else 1)
        for ch in params:
            depth += ch == '('
            depth -= ch == ')'
            nparams += ch == ',' and depth == 0
        k = i + 1
        while k < len(lines) and lines[k] != '}':
            k += 1
        above = []
        a = j - 1
        while a >= 0 and raw_lines[a].strip().startswith(('/*', '**', '*/', '*')):
            above.insert(0, raw_lines[a])
            a -= 1
        found.append((name, j + 1, k - j + 1, nparams, '\n'.join(above)))
    return found


def main():
    build = sys.argv[1] if len(sys.argv) > 1 else 'build'
    failures = {}

    debt = set()
    if os.path.exists('tests/layout-debt.txt'):
        for line in open('tests/layout-debt.txt', encoding='utf-8'):
            line = line.split('#')[0].strip()
            if line:
                debt.add(line)
    seen = set()

    def check(name, problems):
        """'problems': (key, text) pairs; keys listed as debt pass."""
        shown = []
        for key, text in problems:
            seen.add(key)
            if key not in debt:
                shown.append(f'{text}  [{key}]')
        print(('ok ' if not shown else 'not ok ') + name)
        for p in shown:
            print('    ' + p)
        failures[name] = shown

    cli = list(sources('src/cli'))

    # 1a. the program uses the library only
    bad = []
    for p in cli:
        for no, line in enumerate(open(p, encoding='utf-8'), 1):
            if re.match(r'\s*#\s*include\s*[<"](gsl/|sqlite3\.h|libpq)', line):
                bad.append((f'include {p}', f'{p}:{no}: {line.strip()}'))
            if re.match(r'\s*#\s*include\s*"[./]*(src/)?lib/', line):
                bad.append((f'internal {p}', f'{p}:{no}: {line.strip()} (library internals)'))
    check('layout_cli_includes_no_gsl_or_sqlite', bad)

    # 1b. no command calls another command's functions
    defined = {}
    for p in cli:
        if os.path.basename(p).startswith('cmd_') and p.endswith('.c'):
            for f in functions(p):
                defined[f[0]] = p
    bad = []
    for p in cli:
        if not (os.path.basename(p).startswith('cmd_') and p.endswith('.c')):
            continue
        code = strip_comments(open(p, encoding='utf-8').read())
        for name, owner in defined.items():
            if owner != p and re.search(r'\b' + re.escape(name) + r'\s*\(', code):
                bad.append((f'call {p} {name}', f'{p} calls {name}() of {owner}'))
    check('layout_cli_commands_independent', bad)

    # 1c. no mutable static state in the program
    bad = []
    for p in cli:
        code = strip_comments(open(p, encoding='utf-8').read())
        for no, line in enumerate(code.split('\n'), 1):
            s = line.strip()
            if not s.startswith('static ') or 'const' in s.split('=')[0].split('[')[0]:
                continue
            head = s.split('=')[0]
            if '(' in head and ')' in head and not re.search(r'\(\s*\*', head):
                continue  # a function
            var = re.findall(r'(\w+)\s*(?:\[[^]]*\])*\s*$', head.strip().rstrip(';'))
            bad.append((f'static {p} {var[0] if var else no}', f'{p}:{no}: {s}'))
    check('layout_cli_no_mutable_static_state', bad)

    # 1d. only the model module knows the kinds of model (one file each, one row in its table)
    bad = []
    for p in [q for d in ('src', 'include', 'tests') for q in sources(d)]:
        if p.startswith('src/lib/model/'):
            continue
        code = strip_comments(open(p, encoding='utf-8').read())
        for no, line in enumerate(code.split('\n'), 1):
            if re.search(r'\bBG_MODEL_(SH3|SH4|BETA|POLY)\b', line):
                bad.append((f'modelkind {p}', f'{p}:{no}: {line.strip()} (ask bg_model_flags)'))
    check('layout_model_kinds_in_model_module', bad)

    # 2. function size
    bad = []
    for p in list(sources('src/lib')) + cli:
        if not p.endswith('.c'):
            continue
        for name, first, nlines, nparams, above in functions(p):
            if 'Long on purpose:' in above:
                continue
            if nlines > MAX_LINES or nparams > MAX_PARAMS:
                bad.append((f'size {p}:{name}',
                            f'{p}:{first}: {name}: {nlines} lines, {nparams} parameters'))
    check('layout_function_size', bad)
    check('layout_debt_list_current',
          [('-', f'{key}: listed in tests/layout-debt.txt but no longer a problem; remove it')
           for key in sorted(debt - seen)])

    # 3. exported symbols of the shared library
    so = os.path.join(build, 'libbandgap.so')
    if os.path.exists(so):
        declared = set()
        for p in sources('include/bandgap'):
            code = strip_comments(open(p, encoding='utf-8').read())
            code = re.sub(r'^\s*#.*$', '', code, flags=re.M)
            for m in re.finditer(r'\bBG_API\b[^;{]*?\b(\w+)\s*\(', code):
                declared.add(m.group(1))
        out = subprocess.run(['nm', '-D', '--defined-only', so], capture_output=True,
                             text=True, check=True).stdout
        exported = {l.split()[-1].split('@')[0] for l in out.splitlines()
                    if len(l.split()) == 3 and l.split()[1] in 'TDBR'}
        exported = {s for s in exported if not s.startswith('_')}
        bad = [('-', f'exported but not declared BG_API: {s}') for s in sorted(exported - declared)]
        bad += [('-', f'declared BG_API but not exported: {s}')
                for s in sorted(declared - exported)]
        check('layout_shared_library_exports_bg_api', bad)
    return 1 if any(failures.values()) else 0


if __name__ == '__main__':
    sys.exit(main())
