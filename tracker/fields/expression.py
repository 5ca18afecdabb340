"""Formula fields: E and B components written as formulas of x, y, z, t and named parameters.

Example (a scenario's ``[[field]]`` table)::

    type = "expression"
    Bz = "B0 * (1 + (z/L)**2)"
    Bx = "-B0 * x * z / L**2"
    parameters = {B0 = "2 T", L = "0.5 m"}

Formulas are evaluated in SI: x, y, z in m, t in s, every parameter converted to SI
base units; the value of an E formula is taken in V/m, of a B formula in T.

Safety: nothing the user writes is ever executed as Python. The text is parsed with
``ast.parse(mode="eval")`` and the tree is walked against a whitelist (numbers,
the names x y z t pi and the declared parameters, + - * / % **, unary -, comparisons,
``and``/``or``/``not``, the functions in ``FUNCTIONS`` and ``where(cond, a, b)``).
Any other node (attribute access, subscripts, lambda, comprehensions, strings,
keyword arguments, unknown names) is refused with its column. Length, node count,
nesting depth and literal exponents are bounded before anything is compiled.

How formulas keep the one-kernel rule: each formula is compiled into a small
postfix program for a stack machine -- pairs (opcode, operand) of float64 -- stored
in the field table's bulk ``data`` array. One numba function, ``run_program``,
interprets every program. The compiled kernel therefore never changes with the
formulas: numba's on-disk cache (keyed on the kernel's source) stays valid for every
scenario and no formula ever triggers a compilation. The price is interpretation:
roughly a few ns per operation, measured in benchmarks/bench_fields.py.
"""

import ast
import math
import warnings

import numpy as np
from numba import njit

from ..config import DATA_OFFSET_SLOT, KERNEL, LEAF
from ..errors import ScenarioError
from .base import ABSENT, FieldModel, Param

EXPRESSION = 9
COMPONENTS = ("Ex", "Ey", "Ez", "Bx", "By", "Bz")
VARIABLES = ("x", "y", "z", "t")
CONSTANTS = {"pi": math.pi}

#: guards on user text (common practice, no source): generous for real formulas, small
#: enough that parsing and the stack machine stay cheap and bounded
MAX_LENGTH = 2000
MAX_NODES = 600
MAX_DEPTH = 40
MAX_STACK = 32
#: largest |literal exponent| in a ** b; beyond it a formula is almost surely a typo (or an attack)
MAX_EXPONENT = 64.0

# opcodes -----------------------------------------------------------------------------
OP_CONST, OP_VAR = 0, 1
OP_ADD, OP_SUB, OP_MUL, OP_DIV, OP_POW, OP_MOD = 2, 3, 4, 5, 6, 7
OP_LT, OP_LE, OP_GT, OP_GE, OP_EQ, OP_NE, OP_AND, OP_OR = 8, 9, 10, 11, 12, 13, 14, 15
OP_ATAN2, OP_HYPOT, OP_MIN, OP_MAX = 16, 17, 18, 19
LAST_BINARY = 19
OP_NEG, OP_NOT = 20, 21
(OP_SIN, OP_COS, OP_TAN, OP_ASIN, OP_ACOS, OP_ATAN, OP_SINH, OP_COSH, OP_TANH, OP_EXP, OP_LOG, OP_LOG10,
 OP_SQRT, OP_ABS, OP_FLOOR, OP_CEIL, OP_SIGN) = range(22, 39)
LAST_UNARY = 38
OP_WHERE = 39

FUNCTIONS = {  # name -> (opcode, number of arguments)
    "sin": (OP_SIN, 1), "cos": (OP_COS, 1), "tan": (OP_TAN, 1), "asin": (OP_ASIN, 1), "acos": (OP_ACOS, 1),
    "atan": (OP_ATAN, 1), "sinh": (OP_SINH, 1), "cosh": (OP_COSH, 1), "tanh": (OP_TANH, 1), "exp": (OP_EXP, 1),
    "log": (OP_LOG, 1), "log10": (OP_LOG10, 1), "sqrt": (OP_SQRT, 1), "abs": (OP_ABS, 1), "floor": (OP_FLOOR, 1),
    "ceil": (OP_CEIL, 1), "sign": (OP_SIGN, 1),
    "atan2": (OP_ATAN2, 2), "hypot": (OP_HYPOT, 2), "min": (OP_MIN, 2), "max": (OP_MAX, 2),
    "where": (OP_WHERE, 3),
}
BINARY_OPS = {ast.Add: OP_ADD, ast.Sub: OP_SUB, ast.Mult: OP_MUL, ast.Div: OP_DIV, ast.Pow: OP_POW,
              ast.Mod: OP_MOD}
COMPARE_OPS = {ast.Lt: OP_LT, ast.LtE: OP_LE, ast.Gt: OP_GT, ast.GtE: OP_GE, ast.Eq: OP_EQ, ast.NotEq: OP_NE}
RESERVED = set(VARIABLES) | set(CONSTANTS) | set(FUNCTIONS)

# data block: [stack size, start of each of the 6 programs (-1 when absent)], then programs
# [n instructions, (opcode, operand) * n]
HEADER = 1 + len(COMPONENTS)
OMEGA_SLOT = 0  #: params slot: angular frequency (rad/s) the user declared for the step size


# ---------------------------------------------------------------------- the stack machine
@njit(**KERNEL)
def run_program(data, start, x, y, z, t, stack):
    """Value of the postfix program at data[start:] (see the module docstring) at (x, y, z, t).

    ``stack`` is scratch space of at least the program's stack depth (float64).
    """
    n = int(data[start])
    pc = start + 1
    sp = 0
    for _ in range(n):
        op = int(data[pc])
        arg = data[pc + 1]
        pc += 2
        if op == OP_CONST:
            stack[sp] = arg
            sp += 1
        elif op == OP_VAR:
            which = int(arg)
            stack[sp] = x if which == 0 else (y if which == 1 else (z if which == 2 else t))
            sp += 1
        elif op <= LAST_BINARY:
            b = stack[sp - 1]
            a = stack[sp - 2]
            sp -= 1
            if op == OP_ADD:
                r = a + b
            elif op == OP_SUB:
                r = a - b
            elif op == OP_MUL:
                r = a * b
            elif op == OP_DIV:
                r = a / b
            elif op == OP_POW:
                r = a ** b
            elif op == OP_MOD:
                r = a - b * math.floor(a / b)
            elif op == OP_LT:
                r = 1.0 if a < b else 0.0
            elif op == OP_LE:
                r = 1.0 if a <= b else 0.0
            elif op == OP_GT:
                r = 1.0 if a > b else 0.0
            elif op == OP_GE:
                r = 1.0 if a >= b else 0.0
            elif op == OP_EQ:
                r = 1.0 if a == b else 0.0
            elif op == OP_NE:
                r = 1.0 if a != b else 0.0
            elif op == OP_AND:
                r = 1.0 if (a != 0.0 and b != 0.0) else 0.0
            elif op == OP_OR:
                r = 1.0 if (a != 0.0 or b != 0.0) else 0.0
            elif op == OP_ATAN2:
                r = math.atan2(a, b)
            elif op == OP_HYPOT:
                r = math.hypot(a, b)
            elif op == OP_MIN:
                r = a if a < b else b
            else:
                r = a if a > b else b
            stack[sp - 1] = r
        elif op <= LAST_UNARY:
            a = stack[sp - 1]
            if op == OP_NEG:
                r = -a
            elif op == OP_NOT:
                r = 1.0 if a == 0.0 else 0.0
            elif op == OP_SIN:
                r = math.sin(a)
            elif op == OP_COS:
                r = math.cos(a)
            elif op == OP_TAN:
                r = math.tan(a)
            elif op == OP_ASIN:
                r = math.asin(a) if -1.0 <= a <= 1.0 else math.nan
            elif op == OP_ACOS:
                r = math.acos(a) if -1.0 <= a <= 1.0 else math.nan
            elif op == OP_ATAN:
                r = math.atan(a)
            elif op == OP_SINH:
                r = math.sinh(a)
            elif op == OP_COSH:
                r = math.cosh(a)
            elif op == OP_TANH:
                r = math.tanh(a)
            elif op == OP_EXP:
                r = math.exp(a)
            elif op == OP_LOG:
                r = math.log(a) if a > 0.0 else (-math.inf if a == 0.0 else math.nan)
            elif op == OP_LOG10:
                r = math.log10(a) if a > 0.0 else (-math.inf if a == 0.0 else math.nan)
            elif op == OP_SQRT:
                r = math.sqrt(a) if a >= 0.0 else math.nan
            elif op == OP_ABS:
                r = abs(a)
            elif op == OP_FLOOR:
                r = math.floor(a)
            elif op == OP_CEIL:
                r = math.ceil(a)
            else:
                r = 1.0 if a > 0.0 else (-1.0 if a < 0.0 else (0.0 if a == 0.0 else math.nan))
            stack[sp - 1] = r
        else:  # OP_WHERE: cond, a, b -> a if cond else b
            b = stack[sp - 1]
            a = stack[sp - 2]
            c = stack[sp - 3]
            sp -= 2
            stack[sp - 1] = a if c != 0.0 else b
    return stack[0]


@njit(**LEAF)
def expression_field(p, i, data, x, y, z, t):
    """E (V/m) and B (T) from the formula programs of row i (absent components are zero)."""
    start = int(p[i, DATA_OFFSET_SLOT])
    stack = np.empty(MAX_STACK)
    out0 = out1 = out2 = out3 = out4 = out5 = 0.0
    for c in range(6):
        offset = data[start + 1 + c]
        if offset < 0.0:
            continue
        v = run_program(data, start + int(offset), x, y, z, t, stack)
        if c == 0:
            out0 = v
        elif c == 1:
            out1 = v
        elif c == 2:
            out2 = v
        elif c == 3:
            out3 = v
        elif c == 4:
            out4 = v
        else:
            out5 = v
    return out0, out1, out2, out3, out4, out5


@njit(**LEAF)
def expression_rate(p, i, data, x, y, z, t, beta_x, beta_y, beta_z, gamma, qm):
    """Own time scale (rad/s): 2 pi times the declared ``frequency`` (0 when none)."""
    return abs(p[i, OMEGA_SLOT])


# ---------------------------------------------------------------------- parsing and compiling
class FormulaError(ValueError):
    """A formula the whitelist refuses; ``column`` is 1-based (0 when not tied to a place)."""

    def __init__(self, message, column=0, text=""):
        self.column = column
        self.text = text
        self.reason = message
        if column:
            shown = text if len(text) <= 80 else text[max(0, column - 40):column + 40]
            caret = column - 1 if len(text) <= 80 else min(column - 1, 40)
            message = f"column {column}: {message}\n    {shown}\n    {' ' * caret}^"
        super().__init__(message)


def _describe(node):
    names = {
        ast.Attribute: "attribute access", ast.Subscript: "indexing", ast.Lambda: "lambda",
        ast.ListComp: "a comprehension", ast.SetComp: "a comprehension", ast.DictComp: "a comprehension",
        ast.GeneratorExp: "a generator", ast.List: "a list", ast.Tuple: "a tuple", ast.Dict: "a dict",
        ast.Set: "a set", ast.JoinedStr: "a string", ast.Starred: "unpacking", ast.NamedExpr: "assignment (:=)",
        ast.IfExp: "'a if c else b' (write where(c, a, b))", ast.Await: "await", ast.Yield: "yield",
        ast.BitAnd: "'&' (write 'and')", ast.BitOr: "'|' (write 'or')", ast.BitXor: "'^' (write '**' for powers)",
        ast.FloorDiv: "'//' (write floor(a / b))", ast.MatMult: "'@'", ast.LShift: "'<<'", ast.RShift: "'>>'",
        ast.Invert: "'~'", ast.Is: "'is'", ast.IsNot: "'is not'", ast.In: "'in'", ast.NotIn: "'not in'",
    }
    return names.get(type(node), f"'{type(node).__name__}'")


class _Compiler:
    """Walks one parsed formula and emits (opcode, operand) pairs in postfix order."""

    def __init__(self, text, parameters):
        self.text = text
        self.parameters = parameters
        self.code = []
        self.depth = 0
        self.max_depth = 0
        self.uses_time = False

    def fail(self, node, message):
        column = getattr(node, "col_offset", -1) + 1
        if isinstance(node, ast.Attribute):  # point at ".name", not at what precedes it
            column = node.value.end_col_offset + 1
        raise FormulaError(message, column, self.text)

    def emit(self, op, arg=0.0, change=0):
        self.code.append((float(op), float(arg)))
        self.depth += change
        self.max_depth = max(self.max_depth, self.depth)
        if self.max_depth > MAX_STACK:
            raise FormulaError(f"too deeply nested (more than {MAX_STACK} pending values)", 0, self.text)

    def visit(self, node, level=0):
        if level > MAX_DEPTH:
            self.fail(node, f"nested more than {MAX_DEPTH} levels deep")
        if isinstance(node, ast.Constant):
            value = node.value
            if isinstance(value, bool) or not isinstance(value, (int, float)):
                self.fail(node, f"only real numbers are allowed here, not {value!r}")
            try:
                number = float(value)
            except OverflowError:
                self.fail(node, "number too large")
            if not math.isfinite(number):
                self.fail(node, "number too large")
            self.emit(OP_CONST, number, +1)
        elif isinstance(node, ast.Name):
            name = node.id
            if name in VARIABLES:
                self.uses_time |= name == "t"
                self.emit(OP_VAR, VARIABLES.index(name), +1)
            elif name in self.parameters:
                self.emit(OP_CONST, self.parameters[name], +1)
            elif name in CONSTANTS:
                self.emit(OP_CONST, CONSTANTS[name], +1)
            elif name in FUNCTIONS:
                self.fail(node, f"{name!r} is a function: call it, e.g. {name}(x)")
            else:
                known = ", ".join(list(VARIABLES) + list(CONSTANTS) + list(self.parameters))
                self.fail(node, f"unknown name {name!r}; known names: {known} (declare others in parameters)")
        elif isinstance(node, ast.BinOp):
            op = BINARY_OPS.get(type(node.op))
            if op is None:
                self.fail(node, f"{_describe(node.op)} is not allowed")
            if op == OP_POW:
                self._check_exponent(node.right)
            self.visit(node.left, level + 1)
            self.visit(node.right, level + 1)
            self.emit(op, 0.0, -1)
        elif isinstance(node, ast.UnaryOp):
            if isinstance(node.op, ast.UAdd):
                self.visit(node.operand, level + 1)
            elif isinstance(node.op, ast.USub):
                self.visit(node.operand, level + 1)
                self.emit(OP_NEG)
            elif isinstance(node.op, ast.Not):
                self.visit(node.operand, level + 1)
                self.emit(OP_NOT)
            else:
                self.fail(node, f"{_describe(node.op)} is not allowed")
        elif isinstance(node, ast.Compare):
            # a < b < c  ->  (a < b) and (b < c)
            left = node.left
            for index, (op_node, right) in enumerate(zip(node.ops, node.comparators)):
                op = COMPARE_OPS.get(type(op_node))
                if op is None:
                    self.fail(node, f"{_describe(op_node)} is not allowed")
                self.visit(left, level + 1)
                self.visit(right, level + 1)
                self.emit(op, 0.0, -1)
                if index > 0:
                    self.emit(OP_AND, 0.0, -1)
                left = right
        elif isinstance(node, ast.BoolOp):
            op = OP_AND if isinstance(node.op, ast.And) else OP_OR
            self.visit(node.values[0], level + 1)
            for value in node.values[1:]:
                self.visit(value, level + 1)
                self.emit(op, 0.0, -1)
        elif isinstance(node, ast.Call):
            if not isinstance(node.func, ast.Name):
                self.fail(node.func, f"only the functions {', '.join(FUNCTIONS)} may be called, "
                                     f"not {_describe(node.func)}")
            name = node.func.id
            if name not in FUNCTIONS:
                self.fail(node.func, f"unknown function {name!r}; allowed: {', '.join(FUNCTIONS)}")
            if node.keywords:
                self.fail(node.keywords[0].value, "keyword arguments are not allowed")
            op, arity = FUNCTIONS[name]
            if len(node.args) != arity:
                self.fail(node, f"{name}() takes {arity} argument{'s' if arity > 1 else ''}, not {len(node.args)}")
            for arg in node.args:
                if isinstance(arg, ast.Starred):
                    self.fail(arg, "unpacking is not allowed")
                self.visit(arg, level + 1)
            self.emit(op, 0.0, 1 - arity)
        else:
            self.fail(node, f"{_describe(node)} is not allowed")

    def _check_exponent(self, node):
        value = _constant_value(node)
        if value is not None and not abs(value) <= MAX_EXPONENT:
            self.fail(node, f"exponent too large (|exponent| <= {MAX_EXPONENT:g})")


def _constant_value(node, level=0):
    """Float value of a subtree made of number literals only (else None); inf when it overflows.

    Used only to bound exponents such as 9**9**9 before anything runs; evaluated with float
    arithmetic on already-parsed literals, never with eval, and cut off at MAX_EXPONENT.
    """
    if level > MAX_DEPTH:
        return None
    if isinstance(node, ast.Constant):
        if isinstance(node.value, bool) or not isinstance(node.value, (int, float)):
            return None
        try:
            return float(node.value)
        except OverflowError:
            return math.inf
    if isinstance(node, ast.UnaryOp) and isinstance(node.op, (ast.USub, ast.UAdd)):
        inner = _constant_value(node.operand, level + 1)
        return None if inner is None else (-inner if isinstance(node.op, ast.USub) else inner)
    if isinstance(node, ast.BinOp) and type(node.op) in BINARY_OPS:
        left = _constant_value(node.left, level + 1)
        right = _constant_value(node.right, level + 1)
        if left is None or right is None:
            return None
        try:
            if isinstance(node.op, ast.Pow):
                if not abs(right) <= MAX_EXPONENT:
                    return math.inf
                return float(abs(left) ** right)
            if isinstance(node.op, ast.Add):
                return left + right
            if isinstance(node.op, ast.Sub):
                return left - right
            if isinstance(node.op, ast.Mult):
                return left * right
            if isinstance(node.op, ast.Div):
                return left / right
            return left - right * math.floor(left / right)  # ast.Mod, as the stack machine does
        except (OverflowError, ZeroDivisionError, ValueError):
            return math.inf
    return None


def compile_formula(text, parameters=None):
    """Compile one formula; returns (program float64 (2 n,), stack depth, uses t).

    ``parameters`` maps names to SI numbers. Raises FormulaError (with the column)
    for anything outside the whitelist. Never evaluates the text.
    """
    parameters = dict(parameters or {})
    if not isinstance(text, str):
        raise FormulaError(f"a formula is text, not {type(text).__name__}")
    if len(text) > MAX_LENGTH:
        raise FormulaError(f"formula too long ({len(text)} characters; at most {MAX_LENGTH})")
    if not text.strip():
        raise FormulaError("empty formula")
    if "\x00" in text:
        raise FormulaError("the formula contains a NUL character", text.index("\x00") + 1, text)
    try:
        with warnings.catch_warnings():  # e.g. "invalid decimal literal" for '1and': the error below says it
            warnings.simplefilter("ignore", SyntaxWarning)
            tree = ast.parse(text.strip(), mode="eval")
    except SyntaxError as exc:
        stripped = text.strip()
        column = min(exc.offset or len(stripped) + 1, len(stripped) + 1)
        reason = exc.msg or "invalid syntax"
        if not exc.offset:
            reason += " (the formula ends too early)"
        raise FormulaError(f"syntax error: {reason}", column, stripped) from None
    except (RecursionError, MemoryError, ValueError, OverflowError):
        raise FormulaError(f"the formula is too deeply nested or too large to read (at most {MAX_DEPTH} levels)") \
            from None
    nodes = sum(1 for _ in ast.walk(tree))
    if nodes > MAX_NODES:
        raise FormulaError(f"formula too large ({nodes} elements; at most {MAX_NODES})")
    compiler = _Compiler(text.strip(), parameters)
    compiler.visit(tree.body)
    program = np.array(compiler.code, dtype=np.float64).reshape(-1)
    return program, compiler.max_depth, compiler.uses_time


def compile_components(formulas, parameters=None):
    """The data block of a set of formulas {component: text} (components as in COMPONENTS).

    Returns (block float64 1-D, uses t). Raises FormulaError naming the component in
    ``.component``.
    """
    block = [0.0] + [-1.0] * len(COMPONENTS)
    uses_time = False
    for c, name in enumerate(COMPONENTS):
        text = formulas.get(name)
        if text is None:
            continue
        try:
            program, depth, time = compile_formula(text, parameters)
        except FormulaError as exc:
            exc.component = name
            raise
        uses_time |= time
        block[0] = max(block[0], depth)
        block[1 + c] = float(len(block))
        block.append(float(len(program) // 2))
        block.extend(program.tolist())
    return np.array(block, dtype=np.float64), uses_time


# ---------------------------------------------------------------------- the model
def _formulas(v):
    return {name: v[name] for name in COMPONENTS if v.get(name) is not None}


def _parameters(v):
    return dict(v.get("parameters") or ())


def _resolve(v, key, base_dir=None):
    params = _parameters(v)
    for name in params:
        if name in RESERVED:
            raise ScenarioError(f"{key}.parameters.{name}", f"{name!r} is reserved (variables {', '.join(VARIABLES)}, "
                                                            f"constants, functions); choose another name.")
    if not _formulas(v):
        raise ScenarioError(f"{key}.Ex", f"give at least one formula ({', '.join(COMPONENTS)}).")
    try:
        compile_components(_formulas(v), params)
    except FormulaError as exc:
        raise ScenarioError(f"{key}.{exc.component}", str(exc)) from None


def _pack(v):
    return [2.0 * math.pi * v["frequency"]]


def _data(v, base_dir=None):
    return compile_components(_formulas(v), _parameters(v))[0]


def _data_bytes(v, base_dir=None):
    return _data(v).nbytes


#: |div B| (and |curl E| for static formulas) relative to the largest field gradient above
#: which a formula field is flagged (common practice, no source: finite differences on the
#: sample grid resolve ~1e-8 of the gradient, so a real violation stands far above this)
DIVERGENCE_TOLERANCE = 1e-4
CHECK_POINTS = 5  # per axis of the sample grid


def maxwell_residuals(v, center, size):
    """(max |div B|/g_B, max |curl E|/g_E) on a CHECK_POINTS^3 grid of half-width ``size`` (m)
    about ``center`` (m); g = largest Frobenius norm of the field's Jacobian there (0 -> nan).

    Central differences with step 1e-4 size; points where a formula is not finite are skipped.
    """
    from .evaluate import evaluate

    kinds = np.array([EXPRESSION], dtype=np.int64)
    params = np.zeros((1, DATA_OFFSET_SLOT + 1))
    params[0, :1] = _pack(v)
    data = _data(v)
    for a in (kinds, params, data):  # read-only, as every field table: one compiled evaluator for all
        a.setflags(write=False)
    axis = np.linspace(-size, size, CHECK_POINTS)
    grid = np.array(np.meshgrid(axis, axis, axis, indexing="ij")).reshape(3, -1).T + np.asarray(center)
    h = 1e-4 * size
    jac_e = np.zeros((len(grid), 3, 3))
    jac_b = np.zeros((len(grid), 3, 3))
    with np.errstate(all="ignore"):
        for j in range(3):
            step = np.zeros(3)
            step[j] = h
            ep, bp = evaluate(kinds, params, data, grid + step, 0.0)
            em, bm = evaluate(kinds, params, data, grid - step, 0.0)
            jac_e[:, :, j] = (ep - em) / (2 * h)
            jac_b[:, :, j] = (bp - bm) / (2 * h)
        good = np.all(np.isfinite(jac_e), axis=(1, 2)) & np.all(np.isfinite(jac_b), axis=(1, 2))
        jac_e, jac_b = jac_e[good], jac_b[good]
        if not len(jac_b):
            return math.nan, math.nan
        div_b = np.abs(np.trace(jac_b, axis1=1, axis2=2))
        curl_e = np.linalg.norm(np.stack([jac_e[:, 2, 1] - jac_e[:, 1, 2], jac_e[:, 0, 2] - jac_e[:, 2, 0],
                                          jac_e[:, 1, 0] - jac_e[:, 0, 1]], axis=1), axis=1)
        g_b = np.linalg.norm(jac_b, axis=(1, 2)).max()
        g_e = np.linalg.norm(jac_e, axis=(1, 2)).max()
        return (div_b.max() / g_b if g_b > 0 else math.nan, curl_e.max() / g_e if g_e > 0 else math.nan)


def _advice(v, scenario=None):
    center = v.get("check_center")
    if center is None:
        center = scenario.particle.position if scenario is not None else (0.0, 0.0, 0.0)
    size = v["check_size"]
    div_b, curl_e = maxwell_residuals(v, center, size)
    static = not compile_components(_formulas(v), _parameters(v))[1]
    out = []
    where = f"on a {CHECK_POINTS}^3 grid of half-width {size:.3g} m about {list(center)}"
    if div_b > DIVERGENCE_TOLERANCE:
        out.append(("maxwell", f"the B formulas are not divergence-free: |div B| reaches {div_b:.2g} times the "
                               f"largest field gradient {where}. A physical magnetic field has div B = 0; the orbit may show "
                               "spurious drifts."))
    if static and curl_e > DIVERGENCE_TOLERANCE:
        out.append(("maxwell", f"the static E formulas are not curl-free: |curl E| reaches {curl_e:.2g} times the "
                               f"largest field gradient {where}. A static electric field has curl E = 0 (Faraday's law); "
                               "the particle can gain energy around closed loops."))
    return out


MODEL = FieldModel(
    name="expression", code=EXPRESSION, label="Formula field",
    params=tuple(
        Param(name, "formula", "electric_field" if name[0] == "E" else "magnetic_field", ABSENT,
              doc=f"formula of x, y, z (m), t (s) and the parameters, giving {name} in "
                  + ("V/m" if name[0] == "E" else "T"))
        for name in COMPONENTS
    ) + (
        Param("parameters", "table", default=ABSENT,
              doc="named constants with units, e.g. {B0 = \"2 T\", L = \"0.5 m\"} (converted to SI)"),
        Param("frequency", "scalar", "frequency", 0.0,
              doc="frequency of any time dependence, so the step resolves it (0: none)"),
        Param("check_center", "vector", "length", ABSENT,
              doc="centre of the div B / curl E check grid (default: the particle start)"),
        Param("check_size", "scalar", "length", 1.0, positive=True,
              doc="half-width of the div B / curl E check grid"),
    ),
    pack=_pack,
    doc=("Components of E (V/m) and B (T) as formulas of x, y, z, t (SI) and named parameters; + - * / % **, "
         "comparisons, and/or/not, where(c, a, b), " + ", ".join(n for n in FUNCTIONS if n != "where")
         + ", pi. Checked for div B = 0 (and curl E = 0 if static)."),
    resolve=_resolve,
    data=_data,
    data_bytes=_data_bytes,
    advice=_advice,
    rate_label="period of the declared frequency",
)
