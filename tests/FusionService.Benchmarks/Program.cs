// Benchmark entry point: ./build.sh bench -- --filter '*' (see docs/benchmarks.md).
using BenchmarkDotNet.Running;

BenchmarkSwitcher.FromAssembly(typeof(Program).Assembly).Run(args);
