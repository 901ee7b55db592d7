// Scores a CSV of discrete data by BDeu and prints log Z over all DAGs and the most probable
// edge: the smallest useful program against an installed covey (tests/install/check_install.sh).
#include <covey/covey.hpp>
#include <cstdio>

int main(int argc, char** argv) {
  if (argc != 2) return 2;
  const covey::DataTable data = covey::read_csv(argv[1]);
  covey::ScoreOptions options;
  options.max_indegree = 2;
  const covey::ScoreTable table = covey::score_data(data, options);
  const covey::ExactEngine engine(table);
  const covey::ExactPosterior& posterior = engine.posterior();
  int best_from = 0, best_to = 1;
  for (int u = 0; u < table.num_variables(); ++u)
    for (int v = 0; v < table.num_variables(); ++v)
      if (u != v && posterior.edge(u, v) > posterior.edge(best_from, best_to))
        best_from = u, best_to = v;
  std::printf("log_z %.6f\nedge %s %s %.6f\n", posterior.log_total_weight,
              table.name(best_from).c_str(), table.name(best_to).c_str(),
              posterior.edge(best_from, best_to));
  return 0;
}
