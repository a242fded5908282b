# Sourced by bench scripts: prints the path of the built integration-test binary
# (`tests/tests.rs`), building it first when needed.
test_binary() {
    cargo test --locked --test tests --no-run --message-format=json 2>/dev/null |
        python3 -c 'import json,sys
for l in sys.stdin:
    m = json.loads(l)
    if m.get("reason") == "compiler-artifact" and m.get("executable") and m["target"]["name"] == "tests":
        print(m["executable"])'
}
