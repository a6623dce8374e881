#!/usr/bin/env bash
# Installs what is missing, builds orderband and runs the whole test suite.
#   bash scripts/run-tests.sh             release build in build/ (with MPI: the tests that start mpirun run too)
#   bash scripts/run-tests.sh --sanitize  AddressSanitizer + UndefinedBehaviorSanitizer build in build-sanitize/,
#                                         with clang and every warning an error (the parsers' fuzz
#                                         targets are built in it too, for scripts/run-fuzz.sh 1 build-sanitize)
set -euo pipefail
cd "$(dirname "$0")/.."
bash scripts/install-deps.sh

build_dir=build
# Sources are compiled in batches (one translation unit per few files: the shared headers are parsed
# once per batch); the headers' own check keeps one header per unit (CMakeLists.txt).
# The release build has MPI (ORDERBAND_MPI), so that the tests that start mpirun run; the sanitizer
# build below keeps the default, without it.
cmake_args=(-DCMAKE_BUILD_TYPE=Release -DCMAKE_UNITY_BUILD=ON -DORDERBAND_MPI=ON)
ctest_args=()
if [ "${1:-}" = "--sanitize" ]; then
  # The longest tests that repeat code paths others already run under the sanitizers (the same map
  # with other thread counts; the fraction stage on two more pairs, with reference regions, at low
  # counts, with tertiary, on other grains; orientations on a second scan, from the row above against
  # indexing every point (the indexer runs on every grain's first points elsewhere) and read back from
  # a CSV (the CSV parser is fuzzed, the refinement runs in every orientation test); the learned estimator on
  # two mismatched scans, on three layouts under a long footprint and on many-beam patterns (with either reference), whose Bloch waves the sphere tests run; the families command's
  # dynamical columns, whose profiles run sanitized on smaller spheres; the 3-D sizes through map on an 80 × 80 scan, whose fit the stereology
  # tests run; the library's screen, whose code the screen command runs; the learned estimator on five
  # small scans (and on one more with flat bands), whose patch mixture its own test runs; the pattern-centre error, whose fit every map
  # runs; the installed package built by an outside program (a compiler's work, not ours); the report page in a browser
  # and the orientation table's phase, whose map the other map tests make) run in the release build
  # only, which keeps CI well inside its time.
  ctest_args=(-E "TheLibraryScreensAsTheCommandLineDoes|SubResolutionFractionAndEachGrainsMatrixOnItsOwnModel|ReportLoadsInAHeadlessBrowser|OrientationTableNamesThePhaseTheFractionShows|SameResultsWithOneAndTwoThreads|CobaltAndB2PairsFromTheirCifFilesAlone|ClassifiesWhereTheModelsWeightsAreWrong|AreaFractionWhereTheOrderedFundamentalsAreWeaker|ReferenceRegionsSetTheEndMembers|SubResolutionTertiaryFraction|LowCountsWithNeighbourAveraging|NoOrientationBiasPureGammaGrainsAndAPrimaryParticle|OrientScan.GrainsMatchTheTruth|OrientationsFromTheRowAboveAgreeWithIndexingEveryPoint|CsvRoundTripsExactlyAndReadOrientationsAreRefined|MapSizes|HoldsOnRendererVariantsItIsNotTold|HoldsOnTheSuitesVariantsThatChainedGrainsAndFaintGrainsBroke|ADisorderedReferenceRegionMeasuresTheTertiaryShare|HoldsUnderALongFootprintOnScansWhereItBrokeBefore|OnePhaseIsReportedAsOnePhase|HoldsOnManyBeamPatterns|OnePhaseOfManyBeamPatternsIsFoundAsOnePhase|DynamicalProfilesOfBothPhasesFromTheSphereCache|ManyBeamReferenceOnManyBeamPatterns|AGrainOfOnePhaseIsNamedFromTheDataOnManyBeamPatterns|SmallScansShowTheirSecondPhaseThroughTheirPatches|AGrainWithStructureIsNotTakenForTheOrderedPhaseAlone|PatternCentreErrorIsRefinedAway|AnOutsideProgramBuiltWithFindPackageMapsAScan")
  build_dir=build-sanitize
  # Line tables are all a sanitizer report needs for its file:line stack (full debug information
  # made the build 10–20 % slower); the headers compile on their own in the release build already.
  cmake_args=(-DCMAKE_BUILD_TYPE=RelWithDebInfo -DORDERBAND_SANITIZE=ON -DORDERBAND_BUILD_BENCH=OFF
    -DORDERBAND_WERROR=ON -DORDERBAND_FUZZ=ON -DCMAKE_C_COMPILER=clang
    -DCMAKE_CXX_COMPILER=clang++ -DCMAKE_UNITY_BUILD=ON "-DCMAKE_CXX_FLAGS_RELWITHDEBINFO=-O2 -gline-tables-only -DNDEBUG"
    "-DCMAKE_C_FLAGS_RELWITHDEBINFO=-O2 -gline-tables-only -DNDEBUG" -DORDERBAND_HEADER_CHECK=OFF)
  export ASAN_OPTIONS=detect_leaks=1:abort_on_error=1
  export UBSAN_OPTIONS=print_stacktrace=1:halt_on_error=1
fi

cmake -S . -B "$build_dir" "${cmake_args[@]}"
cmake --build "$build_dir" -j "$(nproc)"
ctest --test-dir "$build_dir" --output-on-failure -j "$(nproc)" "${ctest_args[@]}"
