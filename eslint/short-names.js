// @ts-check
/**
 * `short-names`: a declared name of one or two letters must say what it holds. Allowed: the
 * parameters of a one-expression arrow function (`(a, b) => a - b`), loop counters `i`/`j`
 * declared in a `for` head, one-letter type parameters, and the words in `allow` (English words
 * and trade terms such as `id`, `ms`, `q1`, `q3`). ESLint's own `id-length` cannot tell a tiny
 * lambda from a function body, hence this rule.
 */

/** @type {import('eslint').Rule.RuleModule} */
export const shortNames = {
  meta: {
    type: 'suggestion',
    schema: [{ type: 'object', properties: { allow: { type: 'array', items: { type: 'string' } } } }],
    messages: { short: "'{{name}}' is too short to say what it holds: name it for its content." },
  },
  create(context) {
    const allow = new Set(context.options[0]?.allow ?? []);
    /** @param {import('eslint').Scope.Definition} def */
    const exempt = (def) => {
      if (def.type === 'Parameter') {
        const fn = def.node;
        return fn.type === 'ArrowFunctionExpression' && fn.body.type !== 'BlockStatement';
      }
      if (def.type === 'Variable') {
        const declaration = def.parent;
        const inForHead =
          declaration?.parent?.type === 'ForStatement' && declaration.parent.init === declaration;
        return inForHead && (def.name.name === 'i' || def.name.name === 'j');
      }
      // One capital letter is the convention for a type parameter (and a mapped type's key).
      return /^[A-Z]$/.test(def.name.name) && /^TS(TypeParameter|MappedType)$/.test(def.node.type);
    };
    return {
      'Program:exit'(program) {
        for (const scope of context.sourceCode.scopeManager?.scopes ?? []) {
          for (const variable of scope.variables) {
            const name = variable.name;
            if (name.length > 2 || name === '_' || allow.has(name)) continue;
            for (const def of variable.defs) {
              if (def.type === 'ImportBinding' || exempt(def)) continue;
              context.report({ node: def.name ?? program, messageId: 'short', data: { name } });
            }
          }
        }
      },
    };
  },
};
