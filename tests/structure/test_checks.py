"""The structure checks on small made-up sources: what they must find and what they must not."""
import pathlib
import sys
import tempfile
import textwrap
import unittest

sys.path.insert(0, str(pathlib.Path(__file__).resolve().parent))
import check_layers  # noqa: E402
import check_sizes  # noqa: E402


def lengths(source):
    return [(name, start, length) for name, start, length in check_sizes.functions(textwrap.dedent(source))]


class FunctionScanner(unittest.TestCase):
    def test_free_and_member_functions(self):
        found = lengths("""\
            namespace a {
            namespace {
            int one() { return 1; }
            }  // namespace
            struct S {
              int x{3};
              std::vector<int> v = {1, 2};
              int get() const noexcept {
                return x;
              }
              S() = default;
            };
            int S2::two(int y) const {
              return y;
            }
            }  // namespace a
            """)
        self.assertEqual(found, [("one", 3, 1), ("get", 8, 3), ("S2::two", 13, 3)])

    def test_braces_in_comments_and_literals_do_not_count(self):
        found = lengths("""\
            int f() {
              const char* a = "}}}";  // }
              char b = '}';
              /* { */
              auto c = R"x(
            }
            )x";
              int d = 1'000'000;
              return 0;
            }
            int g() { return 2; }
            """)
        self.assertEqual(found, [("f", 1, 10), ("g", 11, 1)])

    def test_lambdas_count_inside_their_function(self):
        found = lengths("""\
            void f(std::vector<int>& v) {
              std::sort(v.begin(), v.end(), [](int a, int b) {
                return a < b;
              });
            }
            const auto kMake = [](int x) -> int {
              return x;
            };
            """)
        self.assertEqual(found, [("f", 1, 5), ("lambda kMake", 6, 3)])

    def test_initialisers_enums_and_constructors(self):
        found = lengths("""\
            enum class Kind { a, b };
            constexpr std::array<Entry, 2> kTable{{
                {Kind::a, "a"},
                {Kind::b, "b"},
            }};
            void h(Options o = Options{}) {
              (void)o;
            }
            Foo::Foo(int x) : a_{x}, b_(x), c_{} {
              run();
            }
            extern "C" {
            int c_api() { return 0; }
            }
            #define BODY { {
            template <typename T>
            auto twice(T t) -> decltype(t + t) {
              return t + t;
            }
            """)
        self.assertEqual(found, [("h", 6, 3), ("Foo::Foo", 9, 3), ("c_api", 13, 1), ("twice", 17, 3)])

    def test_long_function_and_file_are_reported(self):
        with tempfile.TemporaryDirectory() as folder:
            root = pathlib.Path(folder)
            (root / "src" / "fft").mkdir(parents=True)
            body = "\n".join("  x += 1;" for _ in range(check_sizes.MAX_FUNCTION_LINES - 1))
            (root / "src" / "fft" / "ok.cpp").write_text(f"void ok() {{\n{body[:-10]}\n}}\n")
            (root / "src" / "fft" / "long.cpp").write_text(f"void too_long() {{\n{body}\n}}\n")
            (root / "src" / "fft" / "big.cpp").write_text("int x;\n" * (check_sizes.MAX_FILE_LINES + 1))
            _, findings = check_sizes.check(root)
        self.assertEqual(findings, [f"src/fft/big.cpp: {check_sizes.MAX_FILE_LINES + 1} lines (limit 500)",
                                    "src/fft/long.cpp:1: function too_long is 61 lines (limit 60)"])


class Layers(unittest.TestCase):
    def check(self, files):
        with tempfile.TemporaryDirectory() as folder:
            root = pathlib.Path(folder)
            for name, text in files.items():
                (root / name).parent.mkdir(parents=True, exist_ok=True)
                (root / name).write_text(text)
            return check_layers.check(root)[1]

    def test_earlier_and_own_stages_pass(self):
        self.assertEqual(self.check({
            "include/loopaudit/error.hpp": "",
            "src/analysis/crossings.hpp": "",
            "src/report/plots.cpp": '#include "loopaudit/loop/loop.hpp"\n#include "loopaudit/error.hpp"\n'
                                    '#include "report/svg.hpp"\n#include <vector>\n',
            "src/analysis/margins.cpp": '#include "crossings.hpp"\n#include "analysis/crossings.hpp"\n',
        }), [])

    def test_later_stage_and_unknown_folders_fail(self):
        found = self.check({
            "src/fft/window.cpp": '#include <cmath>\n#include "loopaudit/report/plots.hpp"\n',
            "src/loop/loop.cpp": '#include "nowhere/thing.hpp"\n#include "loopaudit/pipeline.hpp"\n',
            "src/misc/x.cpp": "",
        })
        self.assertEqual(found, [
            'src/fft/window.cpp:2: includes "loopaudit/report/plots.hpp" of stage report (position 12) '
            "from stage fft (position 2): a later stage",
            'src/loop/loop.cpp:1: includes "nowhere/thing.hpp", which is in no known stage (from stage loop)',
            'src/loop/loop.cpp:2: includes "loopaudit/pipeline.hpp", which is in no known stage (from stage loop)',
            "src/misc/x.cpp: the folder src/misc/ is not a known stage",
        ])

    def test_one_type_name_in_two_headers_fails(self):
        found = self.check({
            "src/analysis/groups.hpp": "namespace loopaudit::detail {\nstruct Crossing {\n  double x;\n};\n}\n",
            "src/excitation/fit.hpp": "namespace loopaudit::detail {\nstruct Crossing {\n  int y;\n};\n"
                                      "class Fit final : public Base {\n  struct Impl {};\n};\n}\n",
            "src/loop/other.hpp": "struct Impl;\nclass Fitter {\n  struct Impl {};\n};\n",
        })
        self.assertEqual(found, [
            "type Crossing is declared in src/analysis/groups.hpp:2 and in src/excitation/fit.hpp:2: "
            "one name, one type (rename one)",
        ])


if __name__ == "__main__":
    unittest.main()
