/**
 * A tiny, safe arithmetic-expression compiler for coefficient and kernel formulas.
 * No JavaScript is ever evaluated: the text is tokenised and parsed by recursive descent
 * into a tree of closures.
 *
 * Grammar (precedence low → high; `^` is right-associative and binds tighter than unary minus,
 * so -x^2 = -(x^2)):
 *   sum     := product (('+' | '-') product)*
 *   product := unary (('*' | '/') unary)*
 *   unary   := ('+' | '-') unary | power
 *   power   := atom ('^' unary)?
 *   atom    := number | name | name '(' sum (',' sum)* ')' | '(' sum ')'
 * Names: the variables the caller allows (e.g. x, s, y, t), the constants pi and e, and the
 * functions abs exp log sin cos tan sinh cosh tanh sqrt min max step (step(t) = 1 for t ≥ 0, else 0).
 * Evaluation that produces NaN or ±Infinity throws (no silent NaN).
 */

export class ExprError extends Error {
  /** 0-based character offset into the expression text */
  constructor(message: string, readonly position: number) {
    super(message);
    this.name = 'ExprError';
  }
}

export type Env = Record<string, number>;

export interface Compiled {
  /** the source text */
  readonly text: string;
  /** variables the expression actually uses */
  readonly uses: ReadonlySet<string>;
  /** evaluate; throws ExprError on a non-finite result */
  (env: Env): number;
}

type Node = (env: Env) => number;

const FUNCTIONS: Record<string, { arity: [number, number]; fn: (...a: number[]) => number }> = {
  abs: { arity: [1, 1], fn: Math.abs },
  exp: { arity: [1, 1], fn: Math.exp },
  log: { arity: [1, 1], fn: Math.log },
  sin: { arity: [1, 1], fn: Math.sin },
  cos: { arity: [1, 1], fn: Math.cos },
  tan: { arity: [1, 1], fn: Math.tan },
  sinh: { arity: [1, 1], fn: Math.sinh },
  cosh: { arity: [1, 1], fn: Math.cosh },
  tanh: { arity: [1, 1], fn: Math.tanh },
  sqrt: { arity: [1, 1], fn: Math.sqrt },
  min: { arity: [1, 16], fn: Math.min },
  max: { arity: [1, 16], fn: Math.max },
  step: { arity: [1, 1], fn: (t) => (t >= 0 ? 1 : 0) },
};

const CONSTANTS: Record<string, number> = { pi: Math.PI, e: Math.E };

interface Token { kind: 'num' | 'name' | 'op'; text: string; pos: number; value?: number }

function tokenize(src: string): Token[] {
  const out: Token[] = [];
  let i = 0;
  while (i < src.length) {
    const ch = src[i]!;
    if (/\s/.test(ch)) { i++; continue; }
    const num = /^(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?/.exec(src.slice(i));
    if (num) {
      out.push({ kind: 'num', text: num[0], pos: i, value: Number(num[0]) });
      i += num[0].length;
      continue;
    }
    const name = /^[A-Za-z_][A-Za-z_0-9]*/.exec(src.slice(i));
    if (name) {
      out.push({ kind: 'name', text: name[0], pos: i });
      i += name[0].length;
      continue;
    }
    if ('+-*/^(),'.includes(ch)) {
      out.push({ kind: 'op', text: ch, pos: i });
      i++;
      continue;
    }
    throw new ExprError(`unexpected character "${ch}"`, i);
  }
  return out;
}

/**
 * Compile `text` allowing the variables in `variables` (e.g. ['x'] for a coefficient,
 * ['x', 's'] for a 1-D kernel).
 */
export function compileExpr(text: string, variables: readonly string[]): Compiled {
  const toks = tokenize(text);
  let k = 0;
  const uses = new Set<string>();
  const peek = () => toks[k];
  const endPos = text.length;
  const expectOp = (op: string) => {
    const t = toks[k];
    if (!t || t.kind !== 'op' || t.text !== op) {
      throw new ExprError(`expected "${op}"${t ? ` but found "${t.text}"` : ' at the end'}`, t ? t.pos : endPos);
    }
    k++;
  };
  const isOp = (op: string) => { const t = peek(); return !!t && t.kind === 'op' && t.text === op; };

  function sum(): Node {
    let left = product();
    while (isOp('+') || isOp('-')) {
      const op = toks[k++]!.text;
      const right = product();
      const l = left;
      left = op === '+' ? (env) => l(env) + right(env) : (env) => l(env) - right(env);
    }
    return left;
  }
  function product(): Node {
    let left = unary();
    while (isOp('*') || isOp('/')) {
      const op = toks[k++]!.text;
      const right = unary();
      const l = left;
      left = op === '*' ? (env) => l(env) * right(env) : (env) => l(env) / right(env);
    }
    return left;
  }
  function unary(): Node {
    if (isOp('-')) { k++; const u = unary(); return (env) => -u(env); }
    if (isOp('+')) { k++; return unary(); }
    return power();
  }
  function power(): Node {
    const base = atom();
    if (isOp('^')) {
      k++;
      const ex = unary();
      return (env) => Math.pow(base(env), ex(env));
    }
    return base;
  }
  function atom(): Node {
    const t = toks[k];
    if (!t) throw new ExprError('unexpected end of expression', endPos);
    if (t.kind === 'num') { k++; const v = t.value!; return () => v; }
    if (t.kind === 'op' && t.text === '(') {
      k++;
      const inner = sum();
      expectOp(')');
      return inner;
    }
    if (t.kind === 'name') {
      k++;
      if (isOp('(')) {
        const f = FUNCTIONS[t.text];
        if (!f) throw new ExprError(`unknown function "${t.text}" (known: ${Object.keys(FUNCTIONS).join(' ')})`, t.pos);
        k++;
        const args: Node[] = [sum()];
        while (isOp(',')) { k++; args.push(sum()); }
        expectOp(')');
        if (args.length < f.arity[0] || args.length > f.arity[1]) {
          throw new ExprError(`${t.text}() takes ${f.arity[0] === f.arity[1] ? f.arity[0] : `${f.arity[0]} to ${f.arity[1]}`} argument(s), got ${args.length}`, t.pos);
        }
        const fn = f.fn;
        if (args.length === 1) { const a0 = args[0]!; return (env) => fn(a0(env)); }
        return (env) => fn(...args.map((a) => a(env)));
      }
      if (variables.includes(t.text)) {
        uses.add(t.text);
        const name = t.text;
        return (env) => env[name]!;
      }
      if (t.text in CONSTANTS) { const v = CONSTANTS[t.text]!; return () => v; }
      if (t.text in FUNCTIONS) throw new ExprError(`function "${t.text}" needs parentheses`, t.pos);
      throw new ExprError(`unknown name "${t.text}" (allowed variables: ${variables.join(', ') || 'none'}; constants: pi, e)`, t.pos);
    }
    throw new ExprError(`unexpected "${t.text}"`, t.pos);
  }

  if (toks.length === 0) throw new ExprError('empty expression', 0);
  const root = sum();
  if (k < toks.length) throw new ExprError(`unexpected "${toks[k]!.text}"`, toks[k]!.pos);
  const compiled = ((env: Env) => {
    const v = root(env);
    if (!Number.isFinite(v)) {
      const at = Object.entries(env).filter(([n]) => uses.has(n)).map(([n, x]) => `${n}=${x}`).join(', ');
      throw new ExprError(`formula "${text}" is not finite (${v}) at ${at || 'its constant value'}`, 0);
    }
    return v;
  }) as Compiled;
  Object.defineProperty(compiled, 'text', { value: text });
  Object.defineProperty(compiled, 'uses', { value: uses });
  return compiled;
}

/** Convenience: a function of one variable x. */
export function compileFunctionOfX(text: string): (x: number) => number {
  const c = compileExpr(text, ['x']);
  const env: Env = { x: 0 };
  return (x) => { env.x = x; return c(env); };
}
