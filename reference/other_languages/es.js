#!/usr/bin/env node
// A (1 + lambda) evolution strategy on the weights of a fixed network, for Node.js with no
// packages, speaking neuroyard's JSON-lines evolver protocol (README.md beside this file).
//
// The network: inputs and a bias node feed `hidden` hidden nodes, which (with the bias)
// feed the outputs, every node neat_sigmoid; with no hidden nodes the inputs and the bias
// feed the outputs. The first parent's weights are uniform in [-init_range, init_range];
// each generation tries `lambda` mutants of the parent (every weight plus a Gaussian step
// of deviation `sigma`; the first generation holds the parent itself and lambda - 1
// mutants), and the fittest of them replaces the parent when it is at least as fit. The
// same algorithm as neuroyard's hill-climber (reference/hill_climber.py).
// `batch_form` chooses how a batch is sent: "template" (the default: the network once and
// each mutant's weights) or "networks" (every network whole); the networks are the same.
"use strict";

const readline = require("node:readline");

const VERSION = 1;
const DEFAULTS = { lambda: 10, sigma: 1.0, hidden: 3, init_range: 2.0, batch_form: "template", timing: false };
const RULES = {
  lambda: (v) => Number.isInteger(v) && v >= 1,
  sigma: (v) => typeof v === "number" && v > 0,
  hidden: (v) => Number.isInteger(v) && v >= 0,
  init_range: (v) => typeof v === "number" && v > 0,
  batch_form: (v) => v === "template" || v === "networks",
  timing: (v) => typeof v === "boolean",
};
const RULE_WORDS = {
  lambda: "a whole number >= 1",
  sigma: "a number > 0",
  hidden: "a whole number >= 0",
  init_range: "a number > 0",
  batch_form: '"template" (one network and a weight list per member) or "networks" (every network whole)',
  timing: "true or false (true adds compute_ms to the figures)",
};

// sfc32 random numbers, seeded from the harness's seed (read as a double: JavaScript numbers
// hold the 63-bit seed rounded to 53 bits, which is still one fixed stream per seed).
function randomStream(seed) {
  let a = Math.floor(seed / 2 ** 32) >>> 0;
  let b = seed >>> 0;
  let c = 0x9e3779b9;
  let d = 1;
  const next = () => {
    const t = (((a + b) | 0) + d) | 0;
    d = (d + 1) | 0;
    a = b ^ (b >>> 9);
    b = (c + (c << 3)) | 0;
    c = (c << 21) | (c >>> 11);
    c = (c + t) | 0;
    return (t >>> 0) / 4294967296;
  };
  for (let k = 0; k < 15; k++) next();
  let spare = null;
  return {
    uniform: next,
    gauss() {
      if (spare !== null) {
        const z = spare;
        spare = null;
        return z;
      }
      const u = next() + 2 ** -33; // (0, 1): never log(0)
      const r = Math.sqrt(-2 * Math.log(u));
      const angle = 2 * Math.PI * next();
      spare = r * Math.sin(angle);
      return r * Math.cos(angle);
    },
  };
}

// (source, target) of every weight, in weight order; ids: inputs, bias, hidden, outputs.
function links(inputs, outputs, hidden) {
  const bias = inputs;
  const ins = [...Array(inputs).keys(), bias];
  const hid = Array.from({ length: hidden }, (_, k) => bias + 1 + k);
  const outs = Array.from({ length: outputs }, (_, k) => bias + 1 + hidden + k);
  const pairs = [];
  const layers = hidden ? [[ins, hid], [[...hid, bias], outs]] : [[ins, outs]];
  for (const [sources, targets] of layers)
    for (const t of targets) for (const s of sources) pairs.push([s, t]);
  return { pairs, hid, outs };
}

class Strategy {
  constructor(options, problem, seed) {
    this.o = options;
    this.rng = randomStream(seed);
    const { pairs, hid, outs } = links(problem.inputs, problem.outputs, options.hidden);
    this.pairs = pairs;
    this.nodes = [
      ...Array.from({ length: problem.inputs }, (_, k) => ({ id: k, kind: "input" })),
      { id: problem.inputs, kind: "bias" },
      ...hid.map((id) => ({ id, kind: "hidden", activation: "neat_sigmoid" })),
      ...outs.map((id) => ({ id, kind: "output", activation: "neat_sigmoid" })),
    ];
    const r = options.init_range;
    this.parent = pairs.map(() => (2 * this.rng.uniform() - 1) * r);
    this.parentFitness = -Infinity;
    this.generation = 0;
  }

  // The batch reply's fields: the template form (the network once, with the parent's
  // weights, and each mutant's weights in the order of its connections) or every network
  // whole; both describe the same networks.
  ask() {
    this.batch = [];
    for (let k = 0; k < this.o.lambda; k++) {
      const keep = this.generation === 0 && k === 0; // the parent itself first
      this.batch.push(this.parent.map((w) => (keep ? w : w + this.o.sigma * this.rng.gauss())));
    }
    if (this.o.batch_form === "template")
      return { template: this.network(this.parent), weights: this.batch };
    return { networks: this.batch.map((weights) => this.network(weights)) };
  }

  network(weights) {
    return {
      nodes: this.nodes,
      connections: weights.map((weight, e) => ({
        source: this.pairs[e][0],
        target: this.pairs[e][1],
        weight,
      })),
    };
  }

  tell(evaluations) {
    let best = 0; // the first of the fittest; a batch cut by the budget tells fewer
    for (let k = 1; k < evaluations.length; k++)
      if (evaluations[k].fitness > evaluations[best].fitness) best = k;
    if (evaluations[best].fitness >= this.parentFitness) {
      this.parent = this.batch[best];
      this.parentFitness = evaluations[best].fitness;
    }
    this.generation += 1;
  }
}

function resolve(given) {
  const options = { ...DEFAULTS };
  for (const [key, value] of Object.entries(given)) {
    if (!(key in DEFAULTS)) throw new Error(`unknown option '${key}' (known: ${Object.keys(DEFAULTS).join(", ")})`);
    if (!RULES[key](value)) throw new Error(`option '${key}' must be ${RULE_WORDS[key]}, got ${JSON.stringify(value)}`);
    options[key] = value;
  }
  return options;
}

const say = (message) => process.stdout.write(JSON.stringify(message) + "\n");
const milliseconds = (since) => Number(process.hrtime.bigint() - since) / 1e6;
let strategy = null;
let options = null;
let computeMs = 0; // the strategy's own time in the last ask and tell (no JSON, no I/O)

function handle(message) {
  switch (message.type) {
    case "start": {
      if (message.version !== VERSION) throw new Error(`protocol version ${message.version} is not ${VERSION}`);
      options = resolve(message.options);
      if (message.problem.needs_memory) throw new Error("this example evolves feedforward networks; the task needs memory");
      strategy = new Strategy(options, message.problem, message.seed);
      return say({ type: "ready", version: VERSION, settings: options });
    }
    case "ask": {
      const since = process.hrtime.bigint();
      const batch = strategy.ask();
      computeMs = milliseconds(since);
      return say({ type: "batch", ...batch });
    }
    case "tell": {
      const since = process.hrtime.bigint();
      strategy.tell(message.evaluations);
      computeMs += milliseconds(since);
      return say({ type: "noted" });
    }
    case "stats": {
      const values = { parent_fitness: strategy.parentFitness };
      if (options.timing) values.compute_ms = computeMs;
      return say({ type: "figures", values });
    }
    case "stop":
      process.exit(0);
    default:
      throw new Error(`unknown request type ${JSON.stringify(message.type)}`);
  }
}

readline.createInterface({ input: process.stdin }).on("line", (line) => {
  try {
    handle(JSON.parse(line));
  } catch (err) {
    say({ type: "error", reason: String(err.message) });
    process.exit(1);
  }
});
