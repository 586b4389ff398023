// heraldry command line: placeholder until the commands land.
#include <cstdio>
int main() { std::puts("heraldry " HERALDRY_VERSION); return 0; }
