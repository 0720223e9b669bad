// Routes the shipped sample network with its storm scenario through the
// library and prints each outlet's peak: `route_sample SAMPLE_DIR OUT.gpkg`.
#include <reachwise/run/Route.hpp>

#include <iostream>

int main(int argc, char** argv) {
  if (argc != 3) return std::cerr << "usage: route_sample SAMPLE_DIR OUT.gpkg\n", 2;
  reachwise::run::RouteRequest request;
  request.network.path = std::string(argv[1]) + "/network.gpkg";
  request.forcing.inflow = std::string(argv[1]) + "/inflow.csv";
  request.forcing.lateral = std::string(argv[1]) + "/lateral.csv";
  request.outputs.gpkg = argv[2];
  const reachwise::run::RouteSummary run = reachwise::run::route(request);
  for (std::size_t i = 0; i < run.plan.size(); ++i)
    if (run.plan.isOutlet(i))
      std::cout << "outlet " << run.plan.reach_id[i] << ": peak " << run.results.reaches[i].peak_q_m3s << " m3/s\n";
  std::cout << "wrote " << run.gpkg << "\n";
}
