// A TypeScript client of the ibl HTTP API written against the types that openapi-typescript
// generates from openapi/openapi.json (generated/ibl-api.d.ts, not committed). Type-checked
// with `tsc --noEmit --strict` by tests/live/clients_check.sh; it is not run.
import type { components, operations, paths } from "./generated/ibl-api";

type Case = components["schemas"]["Case"];
type Result = components["schemas"]["Result"];
type Problem = components["schemas"]["Problem"];
type Side = components["schemas"]["Side"];
type BatchResponse = components["schemas"]["BatchResponse"];
type MethodCatalogue = components["schemas"]["MethodCatalogue"];
type FigureAccept = NonNullable<operations["analyseFigure"]["parameters"]["header"]>["Accept"];
type AnalysisAnswer =
  paths["/v1/analyses"]["post"]["responses"][200]["content"]["application/json"];

/** A symmetric elliptic strut section of the given chord and thickness ratio, with its
 * potential-flow pressure coefficient, in the members that examples/strut.json uses
 * (name, surface, pressure, flow, transition, mesh); the defaults (Mach number, output,
 * options) are left out, as a client would. */
export function ellipticStrut(chord: number, thickness: number, points: number): Case {
  const a = chord / 2;
  const b = (chord * thickness) / 2;
  const ratio = b / a;
  const x: number[] = [];
  const y: number[] = [];
  const cp: number[] = [];
  for (let i = 0; i < points; i++) {
    const t = (Math.PI * (2 * i + 1)) / points;
    const sin = Math.sin(t);
    const cos = Math.cos(t);
    const speed = ((1 + ratio) * Math.abs(sin)) / Math.sqrt(sin * sin + ratio * ratio * cos * cos);
    x.push(a + a * cos);
    y.push(b * sin);
    cp.push(1 - speed * speed);
  }
  return {
    name: "elliptic strut (invented)",
    surface: { x, y },
    pressure: { cp },
    flow: { speed: 18.0, kinematic_viscosity: 1.48e-5, turbulence_intensity: 0.002 },
    transition: { criterion: "michel" },
    mesh: { y_plus: [1.0, 30.0] },
  };
}

// The types reject what the server would reject by schema.
// @ts-expect-error an unknown transition criterion
export const misspelt: Case["transition"] = { criterion: "mitchel" };
// @ts-expect-error the surface is required
export const noSurface: Case = { pressure: { cp: [] }, flow: { reynolds: 1e6 } };

export function isProblem(entry: Result | Problem): entry is Problem {
  return "status" in entry && "detail" in entry;
}

/** One line per side: transition and separation positions along the surface. */
export function describe(result: AnalysisAnswer): string[] {
  return result.sides.map((side: Side) => {
    const transition = side.transition ? `transition at s = ${side.transition.s}` : "laminar";
    const separation = side.separation
      ? `${side.separation.regime} separation at s = ${side.separation.s}`
      : "attached to the end";
    const last = side.theta?.at(-1);
    const theta = last === undefined ? "" : `, theta at the end ${last}`;
    return `${side.name}: ${transition}, ${separation}${theta}`;
  });
}

/** Where a problem says the case is wrong: the JSON pointers of its errors. */
export function pointers(problem: Problem): string[] {
  return (problem.errors ?? []).map((error) => `${error.pointer}: ${error.reason}`);
}

export function criteria(catalogue: MethodCatalogue): string[] {
  return Object.entries(catalogue.transition.criteria).map(
    ([name, criterion]) => `${name}: ${criterion.summary} (${criterion.reference})`,
  );
}

async function post(base: string, path: string, body: unknown, accept: string): Promise<Response> {
  return fetch(`${base}${path}`, {
    method: "POST",
    headers: { "Content-Type": "application/json", Accept: accept },
    body: JSON.stringify(body),
  });
}

export async function analyse(base: string, body: Case): Promise<Result | Problem> {
  const response = await post(base, "/v1/analyses", body, "application/json");
  return (await response.json()) as Result | Problem;
}

export async function analyseBatch(base: string, cases: Case[]): Promise<BatchResponse | Problem> {
  const response = await post(base, "/v1/analyses/batch", { cases }, "application/json");
  return (await response.json()) as BatchResponse | Problem;
}

export async function figure(base: string, body: Case, accept: FigureAccept): Promise<Uint8Array> {
  const response = await post(base, "/v1/analyses/figure", body, accept ?? "image/svg+xml");
  return new Uint8Array(await response.arrayBuffer());
}

export async function report(base: string): Promise<string[]> {
  const answer = await analyse(base, ellipticStrut(0.32, 0.12, 161));
  return isProblem(answer) ? pointers(answer) : describe(answer);
}
