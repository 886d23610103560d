// Types for the parts of `odex` (test-only ODE solver) that the engine's tests use. The package
// ships its TypeScript source next to its JavaScript, and that source does not pass strict checks,
// so svelte.config.js points the type checker here instead (runtime imports are unchanged).
declare module 'odex' {
	export type Derivative = (x: number, y: number[]) => number[];
	export type OutputFunction = (nr: number, xold: number, x: number, y: number[], dense?: (c: number, x: number) => number) => boolean | void;
	export enum Outcome {
		Converged,
		MaxStepsExceeded,
		EarlyReturn
	}
	export class Solver {
		constructor(n: number);
		denseOutput: boolean;
		absoluteTolerance: number | number[];
		relativeTolerance: number | number[];
		maxSteps: number;
		initialStepSize: number;
		solve(f: Derivative, x: number, y0: number[], xend: number, solOut?: OutputFunction): { y: number[]; outcome: Outcome; nStep: number; xEnd: number };
		grid(dt: number, out: (x: number, y: number[]) => boolean | void): OutputFunction;
	}
}
