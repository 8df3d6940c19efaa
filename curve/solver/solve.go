package solver

import "errors"

func solve(p *Problem, s *Settings) (*Solution, error) {
	if err := p.validate(); err != nil {
		return nil, err
	}
	return nil, errors.New("solver: work in progress")
}

func solveGrid(p *Problem, taus []float64, s *Settings) ([]*Solution, error) {
	return nil, errors.New("solver: work in progress")
}
