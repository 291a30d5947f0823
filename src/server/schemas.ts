/**
 * JSON Schemas of every route's body and responses. They validate requests (ajv inside fastify,
 * no coercion, no unknown fields) and are the source of the OpenAPI document at /api/openapi.json.
 */
import { MAX_NAME_NODES } from '../automaton/pda.ts';

const id = (what: string) => ({ type: 'string', minLength: 1, maxLength: 200, description: what });
const tree = { description: 'a JSON tree: {"kind": constructor, field: value, ...}' };
const names = {
  type: 'object',
  description: 'bindings of open name sets, overriding the server\'s: {"Set": ["member", ...]}',
  // a set with more members than the automaton's name-trie limit cannot bind: refused before any work
  additionalProperties: { type: 'array', items: { type: 'string' }, maxItems: MAX_NAME_NODES },
};

export const errorSchema = {
  $id: 'Error',
  type: 'object',
  required: ['error'],
  properties: {
    error: {
      type: 'object',
      required: ['code', 'message'],
      properties: {
        code: { type: 'string', description: 'stable identifier of the condition' },
        message: { type: 'string', description: 'what went wrong, where, and what was expected' },
        location: { type: 'string', description: 'file:line:col, or a JSON path into the request body ($.field)' },
        line: { type: 'integer' },
        column: { type: 'integer' },
      },
    },
  },
} as const;

const errors = {
  400: { description: 'malformed JSON or an invalid field', $ref: 'Error#' },
  404: { description: 'unknown grammar or model', $ref: 'Error#' },
  413: { description: 'request body too large', $ref: 'Error#' },
  422: { description: 'the program or tree does not fit the grammar, or could not run', $ref: 'Error#' },
  503: { description: 'too many requests at once (retry later)', $ref: 'Error#' },
  504: { description: 'the request passed its time limit', $ref: 'Error#' },
};

const diagnostic = {
  type: 'object',
  properties: {
    severity: { type: 'string', enum: ['error', 'warning'] },
    code: { type: 'string' },
    message: { type: 'string' },
    hint: { type: ['string', 'null'] },
    file: { type: 'string' },
    line: { type: 'integer' },
    column: { type: 'integer' },
    end_line: { type: 'integer' },
    end_column: { type: 'integer' },
  },
  required: ['severity', 'code', 'message', 'file', 'line', 'column'],
};

export const checkSchema = {
  summary: 'Compile a grammar description (.twg text) and report located diagnostics',
  description: 'Results are cached by content hash. A description without errors gets a grammar id usable by every other route.',
  body: {
    type: 'object',
    additionalProperties: false,
    required: ['text'],
    properties: { text: { type: 'string', maxLength: 65536, description: 'compiling is synchronous: a large description holds the server for its duration (measured: 2.6 s for a synthetic 64 KB description of 965 sorts on the shared machine)' }, file: { type: 'string', maxLength: 200, default: 'description.twg' } },
  },
  response: {
    200: {
      type: 'object',
      required: ['ok', 'id', 'hash', 'diagnostics'],
      properties: { ok: { type: 'boolean' }, id: { type: ['string', 'null'] }, hash: { type: 'string' }, diagnostics: { type: 'array', items: diagnostic } },
    },
    ...errors,
  },
};

const step = {
  type: 'object',
  properties: {
    index: { type: 'integer' },
    id: { type: 'integer' },
    token: { type: 'string' },
    allowed_count: { type: ['integer', 'null'], description: 'tokens the grammar allowed at this step (null once the text left the grammar)' },
    allowed: { type: ['boolean', 'null'], description: 'whether the chosen token was allowed (grammar and length budget)' },
    viable: { type: ['boolean', 'null'], description: 'whether the text after the token is still a prefix of some program' },
    complete: { type: ['boolean', 'null'], description: 'whether the text after the token is a whole program (null once the text left the grammar)' },
    byte: { type: ['integer', 'null'], description: 'for a byte-fallback token (`<0xNN>`), its byte NN (an ordinary token may spell the same byte); else null' },
    text: { type: 'string', description: 'output text after this token' },
    filled: { type: 'integer', description: 'non-whitespace characters of text (tree-view offsets count these)' },
  },
};

const treeViewNode = {
  $id: 'TreeViewNode',
  type: 'object',
  properties: {
    label: { type: 'string' },
    field: { type: ['string', 'null'] },
    start: { type: 'integer' },
    end: { type: 'integer' },
    children: { type: 'array', items: { $ref: 'TreeViewNode#' } },
  },
} as const;
export const sharedSchemas = [errorSchema, treeViewNode];

const answer = {
  type: ['object', 'null'],
  description: 'the executed answer: {ok: true, value} or {ok: false, error}; null when not run',
  properties: { ok: { type: 'boolean' }, value: {}, error: { type: 'string' } },
};

export const decodeSchema = {
  summary: 'Answer a question with a model, constrained to programs of a grammar (or not)',
  body: {
    type: 'object',
    additionalProperties: false,
    required: ['question', 'grammar'],
    properties: {
      question: { type: 'string', minLength: 1, maxLength: 2000 },
      grammar: id('grammar id (GET /api/grammars, or the id /api/check returned)'),
      model: id('model id (GET /api/models); default the first'),
      constrained: { type: 'boolean', default: true, description: 'apply the grammar\'s token masks' },
      beam: { type: 'integer', minimum: 1, maximum: 16, description: 'beam search with this many hypotheses' },
      sample: { type: 'boolean', description: 'nucleus sampling instead of greedy decoding' },
      temperature: { type: 'number', exclusiveMinimum: 0, maximum: 100 },
      top_p: { type: 'number', exclusiveMinimum: 0, maximum: 1 },
      seed: { type: 'integer' },
      max_tokens: { type: 'integer', minimum: 1, maximum: 1024 },
      prefix: { type: 'string', maxLength: 100, description: 'text put before the question (default: config.json treewright.prefixes[grammar], else "to <grammar name>: " — the prefix the model was trained with)' },
      names,
      steps: { type: 'boolean', description: 'also return each step: chosen token, allowed-token count, text so far; and a tree view' },
      execute: { type: 'boolean', description: 'run a well-typed output with the grammar\'s executor' },
    },
  },
  response: {
    200: {
      type: 'object',
      properties: {
        text: { type: 'string' },
        tree: { ...tree, type: ['object', 'null'] },
        canonical: { type: ['string', 'null'], description: 'canonical print of the tree (what the executor runs); null without a well-typed tree' },
        valid: { type: 'boolean', description: 'the text is a program of the grammar (the parser accepts it)' },
        well_typed: { type: 'boolean', description: 'valid, and the tree passes the tree check with the bound names' },
        parse_error: { type: ['string', 'null'], description: 'the parser\'s or the tree check\'s message when well_typed is false' },
        tokens: { type: 'array', items: { type: 'integer' } },
        token_texts: { type: 'array', items: { type: 'string' } },
        finished: { type: 'string', enum: ['eos', 'length'] },
        score: { type: 'number' },
        strategy: { type: 'string', enum: ['greedy', 'beam', 'sample'] },
        constrained: { type: 'boolean' },
        model: { type: 'string' },
        grammar: { type: 'string' },
        model_ms: { type: 'number' },
        mask_ms: { type: 'number' },
        total_ms: { type: 'number' },
        steps: { type: 'array', items: step },
        final_allowed_count: { type: ['integer', 'null'] },
        left_grammar_at: { type: ['integer', 'null'], description: 'first step after which the text is no program prefix' },
        over_budget_at: { type: ['integer', 'null'], description: 'first step whose token kept a program prefix but left too few tokens to complete it' },
        tree_view: { oneOf: [{ $ref: 'TreeViewNode#' }, { type: 'null' }] },
        answer,
      },
      required: ['text', 'tree', 'valid', 'well_typed', 'parse_error', 'tokens', 'finished', 'constrained', 'total_ms'],
    },
    ...errors,
  },
};

export const parseSchema = {
  summary: 'Parse program text into a JSON tree (names checked against the grammar\'s bindings)',
  body: {
    type: 'object',
    additionalProperties: false,
    required: ['grammar', 'text'],
    properties: { grammar: id('grammar id'), text: { type: 'string', maxLength: 100000 }, names },
  },
  response: { 200: { type: 'object', required: ['tree'], properties: { tree } }, ...errors },
};

export const printSchema = {
  summary: 'Print a JSON tree as canonical program text',
  body: { type: 'object', additionalProperties: false, required: ['grammar', 'tree'], properties: { grammar: id('grammar id'), tree: { ...tree, type: 'object' } } },
  response: { 200: { type: 'object', required: ['text'], properties: { text: { type: 'string' } } }, ...errors },
};

export const maskSchema = {
  summary: 'The tokens a grammar allows after a text prefix, for a model\'s tokenizer',
  body: {
    type: 'object',
    additionalProperties: false,
    required: ['grammar', 'prefix'],
    properties: {
      grammar: id('grammar id'),
      model: id('model id whose tokenizer the mask covers; default the first'),
      prefix: { type: 'string', maxLength: 10000 },
      sample: { type: 'integer', minimum: 0, maximum: 500, default: 20, description: 'how many allowed tokens to list' },
      names,
    },
  },
  response: {
    200: {
      type: 'object',
      required: ['viable', 'complete', 'allowed_count', 'vocab_size', 'allowed'],
      properties: {
        viable: { type: 'boolean', description: 'the prefix begins some program' },
        complete: { type: 'boolean', description: 'the prefix is a whole program (end of sequence allowed)' },
        allowed_count: { type: 'integer' },
        vocab_size: { type: 'integer' },
        tokens_to_complete: { type: ['integer', 'null'], description: 'fewest tokens that surely complete it, end of sequence included' },
        allowed: { type: 'array', items: { type: 'object', properties: { id: { type: 'integer' }, text: { type: 'string' }, byte: { type: ['integer', 'null'], description: 'for a byte-fallback token (`<0xNN>`), its byte NN; else null' } } } },
      },
    },
    ...errors,
  },
};

export const executeSchema = {
  summary: 'Run a program (text or tree) with the grammar\'s executor: SQL read-only on the database, LF over the fact base',
  body: {
    type: 'object',
    additionalProperties: false,
    required: ['grammar'],
    properties: { grammar: id('grammar id'), text: { type: 'string', maxLength: 100000 }, tree: { ...tree, type: 'object' } },
  },
  response: {
    200: { type: 'object', required: ['ok'], properties: { ok: { type: 'boolean', const: true }, value: {}, tree, text: { type: 'string' } } },
    ...errors,
  },
};

export const grammarsSchema = {
  summary: 'The grammars this server knows (loaded at start, then checked descriptions)',
  response: {
    200: {
      type: 'object',
      required: ['grammars'],
      properties: {
        grammars: {
          type: 'array',
          items: {
            type: 'object',
            properties: {
              id: { type: 'string' },
              name: { type: 'string' },
              file: { type: 'string' },
              origin: { type: 'string', enum: ['startup', 'checked'] },
              start: { type: 'string' },
              hash: { type: 'string' },
              sorts: { type: 'array', items: { type: 'string' } },
              constructors: { type: 'array', items: { type: 'string' } },
              name_sets: { type: 'object', additionalProperties: { type: 'integer' }, description: 'set → number of bound members' },
              names_problem: { type: ['string', 'null'] },
              executor: { type: 'boolean' },
              text: { type: 'string', description: 'the description text' },
            },
          },
        },
      },
    },
  },
};

export const modelsSchema = {
  summary: 'The models this server loaded',
  response: {
    200: {
      type: 'object',
      required: ['models'],
      properties: {
        models: {
          type: 'array',
          items: {
            type: 'object',
            properties: { id: { type: 'string' }, dir: { type: 'string' }, vocab_size: { type: 'integer' }, max_positions: { type: 'integer' }, cached: { type: 'boolean' } },
          },
        },
      },
    },
  },
};
