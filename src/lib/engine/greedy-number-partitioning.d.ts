// Types for the test-only reference package (it ships none): sorts descending, each number to the smallest subset.
declare module 'greedy-number-partitioning' {
	export default function greedyPartitioning(array: number[], numberOfSubsets: number): number[][];
}
